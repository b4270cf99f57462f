"""Internals of :func:`widgetkit.levels.assign_rovibrational`: input checks,
sub-band models, their fits with outlier rejection, and the assignment state
(private)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import AssignmentError
from ._lsq import robust_scale
from ._seed import m_to_J
from .bandfit import PARAMETERS, BandFit, _design, fit_band

__all__ = ["Lines", "Model", "State", "prepare_lines", "seed_model", "fit_model"]

_NAMES5 = PARAMETERS["separate"]
_BIG = 1e12


@dataclass(frozen=True)
class Lines:
    """Checked input lines (input order); ``sigma`` is None without stated errors."""

    ids: np.ndarray
    x: np.ndarray
    sigma: np.ndarray | None
    area: np.ndarray
    area_err: np.ndarray | None
    fwhm: np.ndarray | None
    order: np.ndarray  # argsort of x
    messages: tuple = ()

    @property
    def n(self) -> int:
        return len(self.x)


def prepare_lines(lines: pd.DataFrame) -> Lines:
    """Check the lines table and pull out its columns."""
    if not isinstance(lines, pd.DataFrame):
        raise AssignmentError("lines must be a DataFrame with columns line_id, position, position_err, area")
    for col in ("line_id", "position"):
        if col not in lines.columns:
            raise AssignmentError(f"lines has no column {col!r}; give the table of s.lines "
                                  "(line_id, position, position_err, area)")
    ids = lines["line_id"].to_numpy()
    if len(set(ids.tolist())) != len(ids):
        dup = pd.Series(ids)[pd.Series(ids).duplicated()].tolist()[:5]
        raise AssignmentError(f"line_id values repeat ({dup}); every line needs its own id")
    x = lines["position"].to_numpy(dtype=float)
    bad = ~np.isfinite(x)
    if bad.any():
        raise AssignmentError(f"position is not finite for line_id {ids[bad].tolist()[:5]}; "
                              "remove or refit those lines")
    msgs = []
    sigma = None
    if "position_err" in lines.columns:
        s = lines["position_err"].to_numpy(dtype=float)
        good = np.isfinite(s) & (s > 0)
        if good.all():
            sigma = s
        elif good.any():
            sigma = np.where(good, s, np.max(s[good]))
            msgs.append(f"{int((~good).sum())} lines have no usable position_err; they were given the "
                        f"largest stated error, {np.max(s[good]):.3g} cm-1")
    if sigma is None:
        msgs.append("no position errors given: weights are equal and standard errors come from the "
                    "scatter of the residuals")
    area = (lines["area"].to_numpy(dtype=float) if "area" in lines.columns
            else np.full(len(x), np.nan))
    ae = lines["area_err"].to_numpy(dtype=float) if "area_err" in lines.columns else None
    fw = lines["fwhm"].to_numpy(dtype=float) if "fwhm" in lines.columns else None
    return Lines(ids, x, sigma, area, ae, fw, np.argsort(x, kind="stable"), tuple(msgs))


@dataclass
class Model:
    """Band constants of one sub-band used for prediction."""

    values: dict
    cov5: np.ndarray
    kind: str  # "fit", "scaled", "offset"
    scatter: float  # σ scale of observed lines (Birge factor × σ, or the rms)
    floor: float = 0.0
    fit: BandFit | None = None
    mode: str = "separate"
    jmax: int = 10
    tag: str = ""
    #: intensity model ln(area/(ν L)) = a + b E″ and its scatter, from the sub-band's own lines
    intensity: tuple | None = None

    def log_area(self, Ju, Jl, nu) -> np.ndarray:
        """Expected ln(area) of lines (NaN without an intensity model)."""
        if self.intensity is None:
            return np.full(len(nu), np.nan)
        a, b, _ = self.intensity
        J = np.asarray(Jl, dtype=float)
        E = self.values["B_lower"] * J * (J + 1) - self.values["D_lower"] * (J * (J + 1)) ** 2
        L = np.where(np.asarray(Ju) > J, J + 1.0, J)
        with np.errstate(divide="ignore", invalid="ignore"):
            return a + b * E + np.log(np.abs(nu) * L)

    def predict(self, Ju, Jl):
        A = _design(Ju, Jl, "separate")
        v = np.array([self.values[k] for k in _NAMES5])
        var = np.einsum("ij,jk,ik->i", A, self.cov5, A) + self.floor**2
        return A @ v, np.sqrt(np.clip(var, 0, None))


def _to5(bf: BandFit) -> np.ndarray:
    T = np.zeros((5, len(bf.names)))
    for j, nm in enumerate(bf.names):
        if nm == "D":
            T[3, j] = T[4, j] = 1.0
        else:
            T[_NAMES5.index(nm), j] = 1.0
    cov = bf.fit.cov if np.all(np.isfinite(bf.fit.cov)) else bf.fit.cov_unscaled
    return T @ cov @ T.T


def fit_model(Ju, Jl, y, sigma, *, centrifugal, outlier_sigma, fixed: Model | None = None,
              allow_offset: bool = False, start: np.ndarray | None = None):
    """Fit one sub-band with outlier rejection.

    A line is an outlier when |obs − calc| > ``outlier_sigma`` × σ_eff, the
    expected scatter: σ_eff = σ_obs × max(1, robust Birge ratio) with stated
    position errors, the robust scatter of the residuals without them
    (:func:`._lsq.robust_scale`; none is flagged with fewer than 2 degrees of
    freedom). Newly flagged lines are left out one at a time, the worst first,
    and every line is judged again against the refit (a single gross error
    bends a least-squares fit until good lines look bad). Locked lines are
    judged the same way: they keep their labels, but a lock the band cannot
    agree with must not drag the constants.

    Returns (Model, outlier mask, mode message or None); ``Model.scatter`` is
    the factor of σ_eff (the Birge factor with stated errors, else the scatter
    in cm⁻¹). ``fixed`` supplies the constants held fixed in the band-origin-only
    fit of a sparse sub-band. ``start`` marks lines left out of the first fit (judged again
    after it like all others).
    """
    n = len(y)
    modes = {"separate": ["separate", "shared", "none"], "shared": ["shared", "none"],
             "none": ["none"]}.get(centrifugal)
    if modes is None:
        raise AssignmentError(f"centrifugal must be 'separate', 'shared' or 'none', got {centrifugal!r}")
    out = np.zeros(n, dtype=bool) if start is None else np.asarray(start, dtype=bool).copy()
    for _ in range(max(12, n)):
        use = ~out
        model = _fit_once(Ju[use], Jl[use], y[use], None if sigma is None else sigma[use],
                          modes, fixed if allow_offset else None)
        calc, _ = model.predict(Ju, Jl)
        # residuals of the lines in the fit are studentised, r/√(1 − h): a line that pulls the fit
        # onto itself (a precise position with a wrong label) shows its error instead of hiding it
        r = y - calc
        r[use] = r[use] / np.sqrt(np.clip(1.0 - _leverage(model, sigma, use), 1e-12, None))
        dof = int(use.sum()) - (1 if model.kind == "offset" else len(model.fit.names))
        if sigma is not None:
            z = r / sigma
            b = max(1.0, robust_scale(z[use])) if dof >= 2 else 1.0
            zz = z / b
            model.scatter = b
        else:
            s = robust_scale(r[use]) if dof >= 2 else np.nan
            s = s if np.isfinite(s) and s > 0 else max(float(np.sqrt(np.mean(r[use] ** 2))), 1e-12)
            zz = r / s
            model.scatter = s
        new = np.abs(zz) > outlier_sigma if dof >= 2 else np.zeros(n, dtype=bool)
        add = new & ~out
        if add.sum() > 1:
            # one gross error bends a least-squares fit so that good lines look bad too: newly
            # flagged lines are left out one at a time, the worst first, and all are judged again
            new = (new & out) | (np.arange(n) == int(np.argmax(np.where(add, np.abs(zz), -1.0))))
        if np.array_equal(new, out):
            break
        out = new
    else:
        # no fixed point (a line judged in and out in turn): the outliers are those of the
        # last fit, so that the model and the lines it was fitted to agree (measured on CO at
        # 1 cm-1 resolution: a fit of 51 lines reported with 50, which broke its combination
        # differences)
        out = ~use
    msg = None
    if model.mode != centrifugal:
        msg = (f"too few lines ({int((~out).sum())}) for centrifugal={centrifugal!r}: fitted "
               + ("the band origin only, other constants scaled from the strongest sub-band"
                  if model.kind == "offset" else f"with centrifugal={model.mode!r}"))
    return model, out, msg


def _leverage(model: Model, sigma, use: np.ndarray) -> np.ndarray:
    """Diagonal of the hat matrix of the lines in the fit, h = w aᵀ(AᵀWA)⁻¹a."""
    w = np.ones(int(use.sum())) if sigma is None else 1.0 / sigma[use] ** 2
    if model.kind != "fit":
        return w / np.sum(w)
    A, C = model.fit.design, model.fit.fit.cov_unscaled
    return np.einsum("ij,jk,ik->i", A, C, A) * w


def _fit_once(Ju, Jl, y, sigma, modes, fixed):
    n = len(y)
    for mode in modes:
        p = len(PARAMETERS[mode])
        if n < p + 1 or (fixed is not None and n < p + 2):
            continue
        try:
            bf = fit_band(Ju, Jl, y, sigma, centrifugal=mode)
        except AssignmentError:
            continue
        return Model(bf.values, _to5(bf), "fit", 1.0, 0.0, bf, mode)
    if fixed is not None and n >= 1:
        A = _design(Ju, Jl, "separate")
        v = np.array([fixed.values[k] for k in _NAMES5])
        d = y - A[:, 1:] @ v[1:]
        w = np.ones(n) if sigma is None else 1 / sigma**2
        nu0 = float(np.sum(w * d) / np.sum(w))
        chi2 = float(np.sum(w * (d - nu0) ** 2))
        var = 1 / np.sum(w)
        if sigma is None:
            var = var * chi2 / (n - 1) if n > 1 else np.nan
        elif n > 1:
            var *= max(1.0, chi2 / (n - 1))
        vals = dict(fixed.values, band_origin=nu0)
        cov = np.zeros((5, 5))
        cov[0, 0] = var if np.isfinite(var) else 0.0
        return Model(vals, cov, "offset", 1.0, 0.0 if np.isfinite(var) else 0.05, None, "offset")
    raise AssignmentError(
        f"fewer assigned lines ({n}) than band constants to fit (at least 4 lines of both branches "
        "are needed); lock two lines by hand with s.set_assignment(line_id, label='R(0)') and "
        "s.set_assignment(line_id, label='P(1)'), or give more lines")


def seed_model(data: Lines, g: dict[int, int], *, centrifugal: str, outlier_sigma: float = 4.0
               ) -> Model:
    """Fit the first sub-band from its indexing ``g`` (m -> index into the ascending positions)."""
    if len(g) < 4:
        raise AssignmentError(
            f"only {len(g)} lines could be indexed from the band origin; at least 4 are needed "
            "for ν0, B', B''; lock two lines by hand with s.set_assignment(line_id, label='R(0)')")
    ms = np.array(sorted(g))
    idx = data.order[np.array([g[m] for m in ms])]
    Ju, Jl = m_to_J(ms)
    sig = None if data.sigma is None else data.sigma[idx]
    # the first fit keeps a single D: a bootstrap may still hold a wrong line or two
    model, _, _ = fit_model(Ju, Jl, data.x[idx], sig, outlier_sigma=outlier_sigma,
                            centrifugal="none" if centrifugal == "none" else "shared")
    model.jmax = int(max(Ju.max(), Jl.max())) + 3
    return model


@dataclass
class State:
    """Assignment arrays (input order) and models after refinement."""

    iso: np.ndarray
    Ju: np.ndarray
    Jl: np.ndarray
    calc: np.ndarray
    calc_err: np.ndarray
    outlier: np.ndarray
    blended: np.ndarray
    blend_with: np.ndarray
    models: dict
    seed_iso: str
    rounds: int = 0
    score: float = 0.0
    messages: list = field(default_factory=list)
    ambiguous: list = field(default_factory=list)
    #: why the result is doubtful (filled by the lock handling and the checks)
    reasons: list = field(default_factory=list)

    @property
    def signature(self) -> tuple:
        return (tuple(self.iso.tolist()), tuple(self.Ju.tolist()), tuple(self.Jl.tolist()),
                tuple(self.outlier.tolist()), tuple(self.blended.tolist()))


