"""Lines of the band and of its hot band that hold both (private; see :mod:`._rovib_hot`).

At low resolution a line of the band and a line of the hot band beside it (about half a
spacing apart on average) are often fitted as one line, whose position lies between them.
Such a line is a *blend*, as between isotopologues (:func:`._rovib_match.match`): a
prediction of the other band that found no line of its own and lies within
max(4 σ, FWHM/2) of it (σ² = σ_obs² + σ_calc², at most ``match_fraction`` of the spacing)
makes it one; it stays in the table, labelled, and is left out of the fits, which are then
made again (:func:`._rovib_match._fit_all` for the band, :func:`._rovib_core.fit_model` for
each hot band).
"""

from __future__ import annotations

import numpy as np

from ..errors import AssignmentError
from ._rovib_core import Lines, Model, State, fit_model
from ._rovib_hot import HotBand
from ._rovib_match import _fit_all
from .candidates import band_label, format_label

__all__ = ["mark_cross_blends"]


def _unmatched(model: Model, taken: set, lo: float, hi: float):
    """Predictions (Ju, Jl, calc, calc_err) of ``model`` in [lo, hi] not in ``taken``."""
    J = np.arange(0, model.jmax + 1)
    ju = np.r_[J + 1, J[1:] - 1]
    jl = np.r_[J, J[1:]]
    c, e = model.predict(ju, jl)
    keep = np.array([(int(u), int(v)) not in taken for u, v in zip(ju, jl, strict=True)],
                    dtype=bool) & (c >= lo) & (c <= hi)
    return ju[keep], jl[keep], c[keep], e[keep]


def _mark(data: Lines, rows: np.ndarray, scale: np.ndarray, preds, frac: float, spacing: float,
          who: str) -> dict[int, str]:
    """Rows (line indices) that lie on one of the predictions ``preds``: row -> what."""
    out: dict[int, str] = {}
    ju, jl, c, e = preds
    if not len(c) or not len(rows):
        return out
    for i, sc in zip(rows, scale, strict=True):
        s = (data.sigma[i] if data.sigma is not None else 1.0) * sc
        half = 0.5 * data.fwhm[i] if data.fwhm is not None and np.isfinite(data.fwhm[i]) else 0.0
        thr = np.minimum(np.maximum(4 * np.hypot(s, e), half), frac * spacing)
        k = np.nonzero(np.abs(c - data.x[i]) <= thr)[0]
        if len(k):
            j = int(k[np.argmin(np.abs(c[k] - data.x[i]))])
            out[int(i)] = f"{format_label(ju[j], jl[j])} of {who}"
    return out


def mark_cross_blends(data: Lines, locks: dict, st: State, hot: list[HotBand], opts: dict
                      ) -> list[str]:
    """Mark the lines of the band that hold an unfound hot-band line, and the reverse, as
    blends and fit again (module docstring); returns messages."""
    frac = opts["match_fraction"]
    lo, hi = float(data.x.min()) - 1.0, float(data.x.max()) + 1.0
    locked = {i for i, v in locks.items() if v[1] is not None}
    msgs = []
    new_band: dict[int, str] = {}
    for hb in hot:
        mdl = hb.model
        spacing = abs(mdl.values["B_upper"] + mdl.values["B_lower"])
        taken = {(int(u), int(v)) for u, v in zip(hb.Ju, hb.Jl, strict=True)}
        rows = np.array([i for i in np.nonzero((st.iso != None) & ~st.outlier  # noqa: E711
                                               & ~st.blended)[0] if i not in locked], dtype=int)
        scale = np.array([st.models[st.iso[i]].scatter for i in rows])
        marks = _mark(data, rows, scale, _unmatched(mdl, taken, lo, hi), frac, spacing,
                      f"{hb.iso} {band_label(*hb.band)}")
        new_band.update(marks)
    for i, what in new_band.items():
        st.blended[i], st.outlier[i] = True, False
        st.blend_with[i] = what if st.blend_with[i] is None else f"{st.blend_with[i]}; {what}"
    if new_band:
        try:
            msgs += _fit_all(data, locks, st, opts)
        except AssignmentError:  # too few lines of the band left: unmark, keep the fits
            for i in new_band:
                st.blended[i] = False
            new_band = {}
    for hb in hot:
        _hot_blends(data, st, hb, opts, lo, hi)
    return msgs


def _hot_blends(data: Lines, st: State, hb: HotBand, opts: dict, lo: float, hi: float) -> None:
    """Mark the lines of one hot band that hold an unfound line of the band, and fit it again."""
    marks: dict[int, str] = {}
    good = np.nonzero(hb.good)[0]
    for name, mdl in st.models.items():
        sel = np.nonzero(st.iso == name)[0]
        taken = {(int(st.Ju[i]), int(st.Jl[i])) for i in sel}
        spacing = abs(mdl.values["B_upper"] + mdl.values["B_lower"])
        m = _mark(data, hb.idx[good], np.full(len(good), hb.model.scatter),
                  _unmatched(mdl, taken, lo, hi),
                  opts["match_fraction"], spacing, name)
        for i, what in m.items():
            marks.setdefault(i, what)
    if not marks:
        return
    pos = {int(i): k for k, i in enumerate(hb.idx)}
    for i, what in marks.items():
        k = pos[i]
        hb.blended[k], hb.outlier[k] = True, False
        hb.blend_with[k] = what if hb.blend_with[k] is None else f"{hb.blend_with[k]}; {what}"
    use = ~hb.blended
    try:
        fit, out, _ = fit_model(hb.Ju[use], hb.Jl[use], data.x[hb.idx[use]],
                                None if data.sigma is None else data.sigma[hb.idx[use]],
                                centrifugal=opts["centrifugal"],
                                outlier_sigma=opts["outlier_sigma"], start=hb.outlier[use])
    except AssignmentError:  # too few lines left to fit: keep the fit as it was
        hb.blended[:] = False
        return
    hb.outlier[use] = out
    hb.model = fit
    hb.calc, hb.calc_err = fit.predict(hb.Ju, hb.Jl)
