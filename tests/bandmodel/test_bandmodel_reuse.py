"""What a band model keeps between evaluations (the last value's transform, the band scaled
by a new band area, the renderer's work arrays, the solver's Jacobian array) gives what a
fresh evaluation gives. Self-consistency only: an invented HCl-like band (start values of
the kind used in test_bandmodel_render), compared with a new model that keeps nothing."""

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.bandmodel.build import ModelOptions, build_model
from widgetkit.bandmodel.render import Kernel, make_grid, render

X = np.arange(2700.0, 3050.0, 0.05)


def _model(instrument="gaussian"):
    opts = ModelOptions(bands=((1, 0),), joint=True, centrifugal="shared",
                        isotopologues=("1H-35Cl", "1H-37Cl"), abundance_ratios=(1.0, 0.32),
                        free_abundances=False, shape="doppler", instrument=instrument,
                        domain="absorbance", baseline_degree=1, y_kind="absorbance")
    st = dict(band_origin=2885.98, B_upper=10.136, B_lower=10.44, D=5.3e-4, temperature=296.0,
              band_area=2.0, lorentz_hwhm=0.2, resolution=0.5, baseline=[0.01, 0.002])
    model, params = build_model(X, wk.Diatomic("H", "Cl"), opts, st, structure_temperature=450.0)
    th = np.array([p.value for p in params])
    free = [k for k, p in enumerate(params) if p.vary or p.name == "resolution"]
    return model, th, free


def _close(J, J0):
    # column by column, against the column's largest value (float32 transforms: ~1e-7)
    scale = np.maximum(np.max(np.abs(J0), axis=0), 1e-300)
    return np.max(np.abs(J - J0) / scale)


@pytest.mark.parametrize("instrument", ["gaussian", "boxcar"])
def test_jacobian_at_the_last_value_equals_a_fresh_one(instrument):
    model, th, free = _model(instrument)
    th2 = th.copy()
    th2[model.index["temperature"]] *= 1.03
    th2[model.index["lorentz_hwhm"]] *= 0.9
    model.evaluate(th, free)
    y_value, _ = model.evaluate(th2, free, jac=False)
    y, J = model.evaluate(th2, free)
    y0, J0 = _model(instrument)[0].evaluate(th2, free)
    assert np.array_equal(y_value, y0) and np.array_equal(y, y0)
    assert _close(J, J0) < 1e-12


def test_a_new_band_area_or_baseline_scales_the_kept_band():
    model, th, free = _model()
    model.evaluate(th, free)
    th2 = th.copy()
    th2[model.index["band_area"]] *= 1.7
    th2[model.index["baseline_0"]] += 0.01
    y, J = model.evaluate(th2, free)
    y0, J0 = _model()[0].evaluate(th2, free)
    assert np.max(np.abs(y - y0)) < 1e-12 * np.max(np.abs(y0))
    assert _close(J, J0) < 1e-6
    # ... and a value only, at a third band area
    th3 = th2.copy()
    th3[model.index["band_area"]] *= 0.5
    y3, _ = model.evaluate(th3, free, jac=False)
    assert np.max(np.abs(y3 - _model()[0].evaluate(th3, [], jac=False)[0])) < 1e-12 * np.max(y3)


def test_the_jacobian_goes_into_the_callers_array():
    model, th, free = _model()
    out = np.empty((len(free), X.size))
    _, J = model.evaluate(th, free, out=out)
    assert np.shares_memory(J, out)
    assert np.array_equal(J, _model()[0].evaluate(th, free)[1])


def test_render_with_kept_work_arrays_equals_render_without():
    grid = make_grid(X, 0.02, 5.0)
    kern = Kernel(0.05, "gaussian", 0.05, 0.0, "absorbance")
    rng = np.random.default_rng(5)
    work = {}
    for n_lines in (30, 12, 30):
        pos = np.sort(rng.uniform(2750.0, 3000.0, n_lines))
        area, sig = rng.uniform(0.1, 1.0, n_lines), np.full(n_lines, 0.01)
        d = [rng.normal(size=(n_lines, 3)) for _ in range(3)]
        a, ja = render(grid, pos, area, sig, kern, d_area=d[0], d_pos=d[1], d_sigma=d[2],
                       work=work)
        b, jb = render(grid, pos, area, sig, kern, d_area=d[0], d_pos=d[1], d_sigma=d[2])
        assert np.array_equal(a, b) and np.array_equal(ja, jb)
    # lines wider than the spectrum give no model, and the next call is unharmed
    bad, _ = render(grid, pos, area, np.full(n_lines, 1e3), kern, work=work)
    assert np.all(np.isnan(bad))
    again, _ = render(grid, pos, area, sig, kern, work=work)
    assert np.array_equal(again, render(grid, pos, area, sig, kern)[0])
