"""The band-model step: recorded, replayed by verify, restored from its record, cleared by a
new spectrum, and its constants in s.constants with their method."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.session.steps import STEP_KINDS
from widgetkit.simulate import HANDBOOK

CO = HANDBOOK["12C-16O"]  # Huber and Herzberg 1979, from memory (demo constants)


@pytest.fixture(scope="module")
def co_band():
    """CO at 4 cm-1, simulated (invented data, self-consistency)."""
    return wk.simulate.rovibrational(wk.Diatomic("C", "O"), CO, temperature=296.0, resolution=4.0,
                                     step=1.0, noise=0.002, seed=4)


@pytest.fixture
def fitted(co_band):
    s = wk.Session(co_band)
    s.fit_band_model("CO", resolution=4.0, fix={"temperature": 296.0})
    return s


def test_the_fit_is_one_recorded_step_with_its_constants_marked_band_model(fitted):
    s = fitted
    step = s.history[-1]
    assert step.kind == "fit_band_model" and len(s.history) == 2
    assert step.params["fix"] == {"temperature": 296.0} and step.params["molecule"] == "CO"
    assert step.result["status"] == "ok"
    c = s.constants
    assert list(c.columns[:6]) == ["isotopologue", "name", "value", "stderr", "unit", "method"]
    assert set(c["method"]) == {"band model"}
    b = c[(c["name"] == "B_lower") & (c["isotopologue"] == "12C-16O")]
    assert b["value"].iloc[0] == pytest.approx(1.9225, abs=3 * b["stderr"].iloc[0] + 1e-4)
    assert s.band_model.constant("B_lower")[0] == b["value"].iloc[0]


def test_verify_replays_the_fit_and_a_saved_session_reopens(fitted, tmp_path):
    assert fitted.verify().ok
    path = tmp_path / "band.session.json"
    fitted.save(path)
    again = wk.Session.load(path)
    assert again.band_model is not None
    assert again.constants["value"].tolist() == pytest.approx(fitted.constants["value"].tolist(),
                                                              rel=1e-6)
    assert again.verify().ok
    # the fixed temperature is marked the same way after reopening (stderr NaN, note)
    t_rot = again.constants[again.constants["name"] == "T_rot"].iloc[0]
    assert np.isnan(t_rot["stderr"]) and t_rot["note"] == "fixed (not fitted)"
    # the recorded result keeps what the fit gave (stderr 0), so older files still verify
    rec = fitted.history[-1].result["constants"]
    assert 0.0 in rec["stderr"] and "note" not in rec


def test_restore_rebuilds_the_fit_from_the_record_without_fitting(fitted):
    step = fitted.history[-1]
    kind = STEP_KINDS["fit_band_model"]
    state = kind.restore(fitted.state_at(0), dict(step.params), step.result, fitted._ctx)
    fit, orig = state.band_model, fitted.band_model
    assert fit.nfev == 1 < orig.nfev  # one evaluation, no fit
    np.testing.assert_allclose(fit.model_y, orig.model_y, rtol=0, atol=1e-9)
    assert fit.constants.equals(orig.constants)
    assert fit.status == orig.status and fit.domain == orig.domain
    np.testing.assert_allclose(fit.correlation.to_numpy(), orig.correlation.to_numpy(), atol=1e-12)


def test_a_new_spectrum_clears_the_band_model_and_undo_brings_it_back(fitted):
    s = fitted
    s.crop(2000.0, 2300.0)
    assert s.band_model is None and len(s.constants) == 0
    s.undo()
    assert s.band_model is not None and len(s.constants) > 0


def test_bad_options_change_nothing(fitted):
    before = len(fitted.history)
    with pytest.raises(wk.FitError, match="instrument. must be one of"):
        fitted.fit_band_model("CO", instrument="prism")
    with pytest.raises(wk.FitError, match="unknown parameter .T."):
        fitted.fit_band_model("CO", fix={"T": 300})
    assert len(fitted.history) == before and fitted.band_model is not None


def test_resolution_comes_from_the_file_metadata(co_band):
    # the readers' convention: meta["resolution"] in cm-1 from ##RESOLUTION
    sp = co_band.replace(meta={**co_band.meta, "resolution": 4.0})
    s = wk.Session(sp)
    fit = s.fit_band_model("CO", fix={"temperature": 296.0})
    p = fit.parameters.set_index("name")
    assert p.loc["resolution", "value"] == 4.0 and p.loc["resolution", "status"] == "fixed"


def test_progress_is_reported_and_not_recorded(co_band):
    seen = []
    s = wk.Session(co_band)
    s.fit_band_model("CO", resolution=4.0, progress=lambda *a: seen.append(a))
    assert seen and all(len(a) == 4 for a in seen)
    assert "progress" not in s.history[-1].params


def test_line_positions_and_band_model_constants_side_by_side(co_band):
    s = wk.Session(wk.simulate.rovibrational(wk.Diatomic("C", "O"), CO, temperature=296.0,
                                             resolution=0.1, step=0.02, noise=0.002, seed=8,
                                             x_range=(2080.0, 2200.0)))
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="voigt")
    s.assign_band("CO")
    s.fit_band_model("CO", resolution=0.1)
    c = s.constants
    assert set(c["method"]) == {"line positions", "band model"}
    lp = c[(c["method"] == "line positions") & (c["name"] == "B_lower")
           & (c["isotopologue"] == "12C-16O")]
    bm = c[(c["method"] == "band model") & (c["name"] == "B_lower")
           & (c["isotopologue"] == "12C-16O")]
    diff = abs(lp["value"].iloc[0] - bm["value"].iloc[0])
    # agreement within the combined standard errors (3σ)
    assert diff < 3 * np.hypot(lp["stderr"].iloc[0], bm["stderr"].iloc[0])
