"""The result of a band-model fit: :class:`BandFit`, and the constants derived from it.

Constants are reported per isotopologue under the names of the line-by-line route
(``band_origin, B_upper, B_lower, D_upper, D_lower, B_e, alpha_e, r_e``; joint fits add
``omega_e`` and ``omega_e_x_e``), plus ``T_rot`` (K) and, when fitted,
``abundance_ratio``; every row has ``method = "band model"``. All of them except r_e
are linear in the fitted parameters θ (the term map is linear), so their standard
errors are exact propagations sqrt(gᵀ C g) of the parameter covariance C;
r_e = sqrt(h/(8π²cμB_e)) has σ(r_e) = r_e σ(B_e)/(2B_e). A parameter the fit *held*
because the data do not determine it contributes its plausible range (the scale of
:func:`widgetkit.bandmodel.secondary.relevance`) to the variance of every constant that
depends on it directly: ω_e and a minor isotopologue's band origin on a held ω_e x_e, say.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..fitmarks import FIXED_NOTE, HELD_NOTE, mark_not_fitted, unmarked
from ..levels.bandfit import R_E_CONSTANT
from ..simulate.linesystem import BAND_NAMES, DunhamMap
from .crosscheck import ContourCheck
from .quick import PRSeparation

__all__ = ["BandFit", "derived_constants", "CONSTANT_COLUMNS", "PARAMETER_COLUMNS", "FIXED_NOTE",
           "HELD_NOTE", "mark_not_fitted", "unmarked"]

CONSTANT_COLUMNS = ["isotopologue", "name", "value", "stderr", "unit", "method"]
PARAMETER_COLUMNS = ["name", "value", "stderr", "status", "unit", "start", "source", "note"]
METHOD = "band model"
@dataclass(frozen=True)
class BandFit:
    """A fitted band model (results only; what was asked is in ``spec``).

    Attributes
    ----------
    parameters : DataFrame
        ``name, value, stderr, status`` ("free", "fixed" or "held": fixed by the fit
        because the data do not determine it), ``unit, start, source, note``.
    constants : DataFrame
        ``isotopologue, name, value, stderr, unit, method, note`` (method "band model"). A
        constant that was not fitted (``T_rot`` with the temperature fixed or held, B with
        B_e and α_e fixed, ...) has ``stderr`` NaN and ``note`` :data:`FIXED_NOTE` or
        :data:`HELD_NOTE` (:func:`mark_not_fitted`); ``note`` is empty otherwise.
    correlation, covariance : DataFrame
        Of the free parameters (covariance already scaled, see ``error_scale``).
    x, y, model_y, baseline_y, residual : ndarray (N,)
        Data, model, the baseline part of the model (y units) and y − model.
    y_kind : str
    status : {"ok", "doubtful"}
    reasons : list of str
        Why the result is doubtful (empty when ok).
    messages : list of str
        What was held, estimated, tried and chosen, for the record.
    converged : bool
    message : str
        Why the solver stopped.
    nfev, njev : int
    elapsed : float
        Seconds.
    chisqr, redchi : float
        Σ residual², χ²/(N − P_free) in y units squared.
    error_scale : float
        The largest factor (≥ 1) by which a standard error was widened because the residual
        is structured (1: not widened); with ``widen_errors=False`` the residual's single
        correlation factor that scaled every standard error.
    error_factors : dict
        Free parameter name -> factor its standard error was widened by
        (:mod:`widgetkit.bandmodel.structure`); empty when the residual looks like noise
        or with ``widen_errors=False``.
    structured_residual : bool
        True when the residual's points were found correlated (the model misses something)
        and the standard errors were widened (see ``error_factors`` and the messages; with
        ``widen_errors=False`` only scaled by ``error_scale``).
    domain : str
        Convolution domain used, "absorbance" (approximation) or "transmittance".
    lines : DataFrame
        The modelled lines at the fitted parameters.
    quick : PRSeparation or None
        The P–R separation of the contour.
    contour : ContourCheck or None
        The data's P–R branch maxima against the model's (:mod:`.crosscheck`): when the
        model misses them by more than the noise and 2 % of the separation, the fit is
        doubtful and the standard errors of B and T are widened. None when not checked
        (no P–R maxima in the data, or ``check_contour=False``).
    spec : dict
        The options of the fit (JSON data).
    theta : dict
        Every parameter's value (name -> float), free and fixed.
    """

    parameters: pd.DataFrame
    constants: pd.DataFrame
    correlation: pd.DataFrame = field(repr=False)
    covariance: pd.DataFrame = field(repr=False)
    x: np.ndarray = field(repr=False)
    y: np.ndarray = field(repr=False)
    model_y: np.ndarray = field(repr=False)
    baseline_y: np.ndarray = field(repr=False)
    residual: np.ndarray = field(repr=False)
    y_kind: str = "absorbance"
    status: str = "ok"
    reasons: list = field(default_factory=list)
    messages: list = field(default_factory=list)
    converged: bool = True
    message: str = ""
    nfev: int = 0
    njev: int = 0
    elapsed: float = 0.0
    chisqr: float = float("nan")
    redchi: float = float("nan")
    error_scale: float = 1.0
    error_factors: dict = field(default_factory=dict)
    structured_residual: bool = False
    domain: str = "absorbance"
    lines: pd.DataFrame = field(default=None, repr=False)
    quick: PRSeparation | None = None
    contour: ContourCheck | None = None
    spec: dict = field(default_factory=dict, repr=False)
    theta: dict = field(default_factory=dict, repr=False)

    def value(self, name: str) -> float:
        """The fitted (or fixed) value of a parameter."""
        return float(self.theta[name])

    def stderr(self, name: str) -> float:
        """Standard error of a parameter (0 when fixed or held)."""
        row = self.parameters[self.parameters["name"] == name]
        if row.empty:
            raise KeyError(f"no parameter {name!r}; parameters are "
                           + ", ".join(self.parameters["name"]))
        return float(row["stderr"].iloc[0])

    def constant(self, name: str, isotopologue: str | None = None) -> tuple[float, float]:
        """(value, stderr) of a constant (of the main isotopologue unless named); stderr is
        NaN for a constant that was not fitted (see ``constants``)."""
        c = self.constants[self.constants["name"] == name]
        if isotopologue is not None:
            c = c[c["isotopologue"] == isotopologue]
        if c.empty:
            raise KeyError(f"no constant {name!r}" + (f" for {isotopologue}" if isotopologue else ""))
        return float(c["value"].iloc[0]), float(c["stderr"].iloc[0])

    def __repr__(self) -> str:
        return (f"<BandFit {self.status}: {len(self.parameters)} parameters "
                f"({int((self.parameters['status'] == 'free').sum())} free), "
                f"reduced chi-square {self.redchi:.3g}, {self.domain} domain>")


def _lin(grad: np.ndarray, theta: np.ndarray, cov: np.ndarray) -> tuple[float, float]:
    v = float(grad @ theta)
    var = float(grad @ cov @ grad)
    return v, math.sqrt(var) if var > 0 else 0.0


def derived_constants(model, theta: np.ndarray, cov: np.ndarray, C: np.ndarray, *, joint: bool,
                      isotopologues: list[str], rhos: list[float], reduced_masses: list[float],
                      band: tuple[int, int]) -> pd.DataFrame:
    """The constants table (see the module notes); ``cov`` is (P, P) with zeros where fixed."""
    names = model.names
    rows = []

    def add(iso, name, v, e, unit="cm-1"):
        rows.append({"isotopologue": iso, "name": name, "value": float(v), "stderr": float(e),
                     "unit": unit, "method": METHOD})

    vu, vl = band
    for i, iso in enumerate(isotopologues):
        if joint:
            tm = DunhamMap(rhos)
            ru, rl = tm.rows(i, vu) @ C, tm.rows(i, vl) @ C  # (3, P) rows in θ
            grads = {"band_origin": ru[0] - rl[0], "B_upper": ru[1], "B_lower": rl[1],
                     "D_upper": ru[2], "D_lower": rl[2]}
            if i == 0:
                for nm in ("omega_e", "omega_e_x_e"):
                    g = C[0] if nm == "omega_e" else C[1]
                    add(iso, nm, *_lin(g, theta, cov))
        else:
            k = len(BAND_NAMES) * i
            grads = {nm: C[k + j] for j, nm in enumerate(BAND_NAMES)}
        for nm, g in grads.items():
            add(iso, nm, *_lin(g, theta, cov))
        if not math.isfinite(reduced_masses[i]):
            continue  # a linear polyatomic: no B_e, α_e or r_e from one band (several bonds)
        g_alpha = (grads["B_lower"] - grads["B_upper"]) / (vu - vl)
        g_be = grads["B_lower"] + g_alpha * (vl + 0.5)
        be, be_err = _lin(g_be, theta, cov)
        add(iso, "B_e", be, be_err)
        add(iso, "alpha_e", *_lin(g_alpha, theta, cov))
        if be > 0:
            re = math.sqrt(R_E_CONSTANT / (reduced_masses[i] * be))
            add(iso, "r_e", re, 0.5 * re * be_err / be, "Å")
    k_t = names.index("temperature")
    add(isotopologues[0], "T_rot", theta[k_t], math.sqrt(max(cov[k_t, k_t], 0.0)), "K")
    for iso in isotopologues[1:]:
        nm = f"abundance_ratio({iso})"
        k = names.index(nm)
        if cov[k, k] > 0:
            add(iso, "abundance_ratio", theta[k], math.sqrt(cov[k, k]), "1")
    return pd.DataFrame(rows, columns=CONSTANT_COLUMNS)
