"""The line-fit paragraph of a report's methods: profile, baseline, weights, which parameters
were free, fixed or tied and to what, and how the standard errors were obtained, all read
from the fit's recorded settings and statistics (also for a session reopened from its file,
whose fit is rebuilt from the record and never refitted)."""

from __future__ import annotations

import math

from ..formatting import article, plural
from .flags import known, parameter_label, parameter_text
from .phrases import join_and as _and
from .phrases import latest_step as _latest
from .phrases import number_text as _num

__all__ = ["line_fit_paragraph"]

_SHAPE_NAMES = {"gaussian": "Gaussian", "lorentzian": "Lorentzian", "voigt": "Voigt",
                "pseudo_voigt": "pseudo-Voigt"}
_WIDTH_NAMES = {"sigma": "Gaussian σ", "gamma": "Lorentzian γ (HWHM)"}
_BASELINE_NAMES = {None: "no baseline", "none": "no baseline", "constant": "a constant baseline",
                   "linear": "a linear baseline", "poly2": "a quadratic baseline",
                   "exponential": "an exponential baseline b₀·exp(−b₁x)"}
def _constraint_roles(constraints) -> tuple[list[str], list[str]]:
    """(fixed, tied) descriptions of a line fit's ``constraints`` as recorded in its settings:
    a number fixes a parameter, a string ties it by an expression, a mapping may do either
    (``vary``/``value``, ``expr``); ``"doppler"`` fixes Gaussian widths to Doppler widths."""
    fixed, tied = [], []
    for name, c in (constraints or {}).items():
        if name == "doppler" and isinstance(c, dict):
            which = f" of lines {c['lines']}" if c.get("lines") else ""
            fixed.append(f"the Gaussian σ{which} at the Doppler width of {_num(c.get('mass'))} u "
                         f"at {_num(c.get('temperature'))} K")
        elif isinstance(c, bool):
            continue
        elif isinstance(c, (int, float)):
            fixed.append(f"{parameter_label(name)} at {_num(c, 6)}")
        elif isinstance(c, str):
            tied.append(f"{parameter_label(name)} = {parameter_text(c)}")
        elif isinstance(c, dict):
            if c.get("expr"):
                tied.append(f"{parameter_label(name)} = {parameter_text(c['expr'])}")
            elif c.get("vary") is False:
                fixed.append(f"{parameter_label(name)} at "
                             + (_num(c["value"], 6) if "value" in c else "its starting value"))
            if c.get("min") is not None or c.get("max") is not None:
                tied.append(f"{parameter_label(name)} bounded to [{c.get('min', '−∞')}, "
                            f"{c.get('max', '∞')}]")
    return fixed, tied


def _degrees_of_freedom(fit) -> int | None:
    """ν = χ²/(χ²/ν) from the two recorded statistics (a restored fit holds no lmfit result)."""
    chisqr, redchi = known(fit, "chisqr"), known(fit, "redchi")
    try:
        nu = float(chisqr) / float(redchi)
    except (TypeError, ValueError, ZeroDivisionError):
        return None
    return int(round(nu)) if math.isfinite(nu) and nu > 0 else None


def line_fit_paragraph(session, state) -> str | None:
    fit = state.line_fit
    found = _latest(session, fit, "fit_lines")
    if found is None:
        return None
    i, p = found
    spec = known(fit, "spec") if isinstance(known(fit, "spec"), dict) else {}
    shape = spec.get("shape", p.get("shape", "voigt"))
    widths = {"gaussian": ["sigma"], "lorentzian": ["gamma"]}.get(shape, ["sigma", "gamma"])
    n = len(known(fit, "table", []))
    shared = spec.get("shared_width", p.get("shared_width"))
    width_text = _and([_WIDTH_NAMES[w] for w in widths])
    if shared is True:
        per_line = f"area and position free for each line, one {width_text} shared by all"
    elif shared:
        per_line = f"area and position free for each line, widths shared as given ({shared})"
    else:
        per_line = _and(["area", "position", *[_WIDTH_NAMES[w] for w in widths]]) + \
            " free for each line"
    x = known(fit, "x")
    where = ""
    if x is not None and len(x):
        where = f" over {_num(x[0], 6)}–{_num(x[-1], 6)} cm⁻¹ ({plural(len(x), 'point')})"
    base = spec.get("baseline", p.get("baseline", "linear"))
    out = [f"Line fit (step {i}). {plural(n, 'line')} fitted together with "
           f"{_SHAPE_NAMES.get(shape, shape)} profiles ({per_line}) on "
           f"{_BASELINE_NAMES.get(base, article(str(base) + ' baseline'))}{where}, by non-linear "
           "least squares (Levenberg–Marquardt on the analytic Jacobian, finished with lmfit's "
           "trust-region solver)."]
    if p.get("weights") is not None:
        out.append("The residuals were weighted by the weights given with the step, "
                   "wᵢ = 1/σᵢ per point.")
    else:
        out.append("The residuals were not weighted (every point has weight 1).")
    fixed, tied = _constraint_roles(spec.get("constraints"))
    redchi = known(fit, "redchi")
    nu = _degrees_of_freedom(fit)
    x = known(fit, "x")
    err = ("Standard errors are the square roots of the diagonal of the covariance matrix "
           "(JᵀJ)⁻¹ of the free parameters scaled by the reduced chi-square χ²/ν")
    if redchi is not None and math.isfinite(float(redchi)):
        err += f" = {_num(redchi, 3)}"
    if nu is not None:
        err += f" (ν = {nu} degrees of freedom"
        err += (f", {plural(len(x) - nu, 'free parameter')})" if x is not None and len(x) > nu
                else ")")
    out.append(err + ", so the noise level is taken from the scatter of the residuals; height and "
               "FWHM and their errors follow from the fitted parameters by linear propagation "
               "with the full covariance.")
    out.append("Fixed: " + ("; ".join(fixed) if fixed else "none") + ". Tied or bounded by hand: "
               + ("; ".join(tied) if tied else "none") + ".")
    out.append("Widths are bounded below by a tenth of the sampling step; a parameter that ends "
               "on a bound is listed under Flags and its standard error is not meaningful.")
    conv = known(fit, "converged")
    if conv is not None:
        out.append("The fit converged (the remaining Gauss–Newton step lowers χ² by less than "
                   "10⁻⁴ of χ²/ν)." if conv else "The fit did NOT converge (see Flags).")
    return " ".join(out)
