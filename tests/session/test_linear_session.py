"""Linear-molecule and Raman kinds through the session: a Raman spectrum recorded on an absolute
axis, converted to Raman shift, peaks, lines, assignment, temperature, record, reopen, report."""

import pytest

import widgetkit as wk
from widgetkit.simulate import HANDBOOK, levels_from_equilibrium, raman_spectrum


@pytest.fixture(scope="module")
def session():
    n2 = wk.Linear("NN")
    levels = levels_from_equilibrium(n2, HANDBOOK["14N-14N"])  # handbook values, from memory
    shifted = raman_spectrum(n2, levels, excitation=532.0, medium="air", x_range=(-160, 160),
                             step=0.05, resolution=0.5, noise=3.0, seed=4, temperature=296.0,
                             detector="photon_counting")
    nu0 = shifted.meta["excitation_wavenumber"]
    # as the spectrometer wrote it: absolute wavenumber of the scattered light
    absolute = wk.Spectrum((nu0 - shifted.x)[::-1], shifted.y[::-1], y_kind="intensity")
    s = wk.Session(absolute)
    s.to_raman_shift(532.0, medium="air")
    s.find_peaks()
    s.fit_lines(shape="voigt")
    s.assign_band("NN", kind="raman_rotational", detector="photon_counting")
    return s, levels["14N-14N"]["v=0"]["B"]


def _const(s, name):
    c = s.constants.set_index("name")
    return float(c.loc[name, "value"]), float(c.loc[name, "stderr"])


def test_nitrogen_rotational_constant_and_temperature_through_the_session(session):
    s, B0 = session
    v, e = _const(s, "B")
    assert abs(v - B0) < 3 * e  # the B0 simulated (from handbook B_e, α_e)
    t, et = _const(s, "temperature")
    assert abs(t - 296.0) < 3 * et and et < 10  # the temperature simulated
    a = s.assignments
    assert a["label"].notna().mean() > 0.9 and set(a["side"].dropna()) == {"Stokes", "anti-Stokes"}
    assert s.assignment.status == "ok" and s.assignment.model.startswith("linear molecule 14N-14N")


def test_the_raman_session_replays_reopens_and_reports_its_model(session, tmp_path):
    s, _ = session
    assert s.verify().ok
    s.save(tmp_path / "n2.json")
    again = wk.Session.load(tmp_path / "n2.json")
    assert again.constants.equals(s.constants)
    assert again.assignment.status == "ok"
    out = tmp_path / "n2.md"
    wk.report.write_report(again, out)
    text = out.read_text()
    assert "pure rotational Raman" in text and "Placzek" in text


def test_a_linear_kind_refuses_diatomic_only_options(session):
    s, _ = session
    before = len(s.history)
    with pytest.raises(wk.AssignmentError, match="does not take band"):
        s.assign_band("NN", kind="raman_rotational", band=[1, 0])
    assert len(s.history) == before
