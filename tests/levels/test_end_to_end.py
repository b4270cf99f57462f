"""Headless path spectrum -> peaks -> lines -> assignments -> constants through the session,
on a spectrum simulated by widgetkit.simulate from the handbook constants of H35Cl
(Huber & Herzberg 1979, handbook values from memory)."""

import numpy as np
import pytest

import widgetkit as wk


@pytest.fixture(scope="module")
def session():
    hcl = wk.Diatomic("H", "Cl")
    c = {k: v for k, v in wk.simulate.HANDBOOK["1H-35Cl"].items() if k != "r_e"}
    sp = wk.simulate.rovibrational(hcl, c, x_range=(2600, 3150), step=0.02, seed=1,
                                   noise=0.0005, lorentz_hwhm=0.1, temperature=296.0)
    s = wk.Session(sp)
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="lorentzian")
    s.assign_band(hcl, temperature=296.0)
    return s, c


def _const(s, iso, name):
    row = s.constants[(s.constants["isotopologue"] == iso) & (s.constants["name"] == name)]
    return float(row["value"].iloc[0]), float(row["stderr"].iloc[0])


def test_both_isotopologue_sub_bands_are_found_with_p_and_r_branches(session):
    s, _ = session
    a = s.assignments
    assert set(a["isotopologue"].dropna()) == {"1H-35Cl", "1H-37Cl"}
    labels = set(a.loc[a["isotopologue"] == "1H-35Cl", "label"])
    assert {"R(0)", "P(1)"} <= labels and not any(lab.startswith("Q") for lab in labels)


def test_constants_agree_with_those_simulated(session):
    s, c = session
    # band constants implied by the simulated equilibrium constants (with γe), self-consistency
    G = wk.levels.vib_term([0, 1], c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])
    Bv = wk.levels.rot_constant([0, 1], c["B_e"], c["alpha_e"], c["gamma_e"])
    want = {"band_origin": G[1] - G[0], "B_lower": Bv[0], "B_upper": Bv[1]}
    for name, v in want.items():
        got, err = _const(s, "1H-35Cl", name)
        assert abs(got - v) < max(4 * err, 1e-4), (name, got, v, err)


def test_bond_length_and_rotational_temperature(session):
    s, _ = session
    r, _ = _const(s, "1H-35Cl", "r_e")
    assert r == pytest.approx(1.27455, abs=2e-4)  # handbook value, from memory (γe shifts B_e)
    t, e = _const(s, "1H-35Cl", "T_rot")
    assert t == pytest.approx(296.0, rel=0.01) and e > 0  # simulated at 296 K


def test_the_session_replays_to_the_same_assignment(session):
    s, _ = session
    report = s.verify()
    assert report.ok, report.mismatches


def test_a_manual_assignment_is_locked_and_wins(session):
    s, _ = session
    a = s.assignments
    lid = int(a.loc[(a["isotopologue"] == "1H-35Cl") & (a["label"] == "R(3)"), "line_id"].iloc[0])
    s.set_assignment(lid, isotopologue="1H-35Cl", label="R(3)")
    b = s.assignments.set_index("line_id")
    assert b.loc[lid, "locked"] and b.loc[lid, "label"] == "R(3)"
    assert np.isfinite(b["calc"]).sum() >= len(b) - 2


def _co_band(resolution: float, *, seed: int = 3) -> wk.Spectrum:
    """CO 1-0 at 296 K (HANDBOOK constants, from memory) at a coarse resolution; the file's
    resolution is in meta["resolution"] as a reader puts it."""
    co = wk.Diatomic("C", "O")
    c = {k: v for k, v in wk.simulate.HANDBOOK["12C-16O"].items() if k != "r_e"}
    sp = wk.simulate.rovibrational(co, c, x_range=(1950, 2350), step=0.5, resolution=resolution,
                                   noise=0.002, temperature=296.0, seed=seed, lorentz_hwhm=0.05)
    return wk.Spectrum(sp.x, sp.y, y_kind=sp.y_kind, meta={**sp.meta, "resolution": resolution})


def test_an_unresolved_co_band_is_not_a_confident_progression():
    # only the P and R branch maxima are left at 7 cm-1: read as two bands they gave ωe ≈ 2240
    # with a small error; now the result is doubtful, its errors unknown, and it says why
    s = wk.Session(_co_band(7.0))
    s.find_peaks(min_snr=10)
    # the peak search may also report tiny bumps at the spectrum's edges (heights ~1e-4 of the
    # band's); they are not part of this check
    p = s.peaks
    for pid in p.loc[p["height"] < 0.01 * p["height"].max(), "peak_id"]:
        s.remove_peak(int(pid))
    s.fit_lines(shape="gaussian")
    assert len(s.lines) == 2
    s.assign_band("CO", kind="progression", temperature=296.0)
    a = s.assignment
    assert a.status == "doubtful"
    assert s.constants.set_index("name").loc["omega_e", "stderr"] != s.constants.set_index(
        "name").loc["omega_e", "stderr"]  # NaN
    text = " ".join(a.reasons)
    assert "nothing tests it" in text and "P–R branch separation" in text
    assert "hot band 2-1" in text and "Boltzmann factor at 296 K" in text
    assert s.history[-1].result["status"] == "doubtful"


def test_an_unresolved_co_band_is_refused_line_by_line_with_the_contour_pointer():
    s = wk.Session(_co_band(4.0))
    s.find_peaks(min_snr=10)  # P-branch lines partly resolved; the file says 4 cm-1 resolution
    s.fit_lines(shape="gaussian", region=(2080, 2130))
    n = len(s.history)
    with pytest.raises(wk.AssignmentError, match="instrument resolution, 4 cm-1") as err:
        s.assign_band("CO", temperature=296.0)
    assert "s.fit_band_model" in str(err.value) and len(s.history) == n
    # the refusal offers the quick P–R estimate measured on this spectrum: B of CO v=0 is
    # 1.9225 cm-1 (handbook, from memory); the estimate holds to a few per cent
    text = str(err.value)
    assert "Quick estimate from this spectrum" in text
    B = float(text.split("so B ≈ ")[1].split(" ")[0])
    assert B == pytest.approx(1.9225, rel=0.1)


def test_a_refusal_without_p_r_maxima_says_no_quick_estimate_was_found():
    from widgetkit.bandmodel.quick import quick_estimate_text

    x = np.linspace(2000, 2300, 2000)
    text = quick_estimate_text(x, np.exp(-0.5 * ((x - 2150) / 20) ** 2))  # one smooth hump
    assert text.startswith("No P and R branch maxima")


def test_a_co_band_at_one_wavenumber_whose_outlier_test_cycles_is_assigned():
    # CO 1-0 at 296 K (HANDBOOK constants, from memory), 1 cm-1 resolution, seeded noise: the
    # outlier rejection judged one line in and out in turn and its last fit no longer matched
    # the lines it reported (the combination differences then raised a ValueError)
    co = wk.Diatomic("C", "O")
    c = wk.simulate.HANDBOOK["12C-16O"]
    x = np.arange(1950.0, 2300.0, 1.0 / 3.0)
    sp = wk.simulate.rovibrational(co, c, x=x, temperature=296.0, resolution=1.0, noise=0.002,
                                   seed=1)
    s = wk.Session(sp)
    s.find_peaks()
    s.fit_lines()
    s.assign_band(co)
    const = s.constants.set_index("name")
    assert "B_lower_cd" in const.index
    # self-consistency: the simulated B'' (B_v of v = 0) within 4 standard errors
    b_lower = wk.levels.rot_constant([0], c["B_e"], c["alpha_e"], c.get("gamma_e", 0.0))[0]
    assert abs(const.loc["B_lower", "value"] - b_lower) < 4 * const.loc["B_lower", "stderr"]
