"""Secondary parameters of a band-model fit (private): when the data do not determine
them (:func:`relevance`), when a value is implausible (:data:`IMPLAUSIBLE_SHIFT`), and
their physical estimates made again from the fitted constants (:func:`estimate_again`).
Split from :mod:`.stages`: :func:`hold_undetermined` works on its ``Run``."""

from __future__ import annotations

import math

import numpy as np

from .build import kratzer_d, pekeris_wexe

__all__ = ["relevance", "IMPLAUSIBLE_SHIFT", "PLAUSIBILITY_NAMES", "estimate_again",
           "hold_undetermined"]

#: a secondary parameter of :data:`PLAUSIBILITY_NAMES` that ends further than this many of its
#: relevance scales (:func:`relevance`) from its start is held there: its start comes from
#: the handbook or a physical estimate (Pekeris), and a value that far off is the model's
#: misfit taken up, not a measurement (measured: CO 1-0 with natural 13CO at 2 cm⁻¹, started
#: from a line width that ran over the neighbours, gave ω_e x_e = −179 ± 3 cm⁻¹ against 13.3,
#: with B and T right; that start is mended, :func:`.start._observed_fwhm`)
IMPLAUSIBLE_SHIFT = 4.0
#: the parameters judged so (an abundance ratio or a line width may legitimately move far)
PLAUSIBILITY_NAMES = ("omega_e_x_e", "D", "D_e", "D_upper", "D_lower")


def relevance(name: str, value: float, start: float, B: float, step: float) -> float:
    """The scale above which the standard error of secondary parameter ``name`` means
    "not determined" (cm⁻¹ or the parameter's unit)."""
    base = name.split("(")[0]
    if base in ("D", "D_e", "D_upper", "D_lower"):
        return max(abs(start), 1e-12)
    if base == "lorentz_hwhm":
        return max(abs(value), 0.005)
    if base == "resolution":
        return max(abs(value), step)
    if base == "gauss_fwhm":
        return max(abs(value), step)
    if base == "omega_e_x_e":
        return 0.5 * max(abs(start), 1e-6)
    if base.startswith("abundance_ratio"):
        return 0.5 * max(abs(start), 1e-6)
    if base == "band_origin":
        return 0.5 * B
    if base in ("B_upper", "B_lower"):
        return 0.05 * B
    if base == "herman_wallis":
        return 0.05
    return math.inf


def estimate_again(name: str, theta: dict, band) -> float | None:
    """The estimate of ω_e x_e (Pekeris) or D (Kratzer) from the fitted B, α_e and band
    origin ``theta`` (name -> value), None for other parameters or when it cannot be made.

    The first estimates come from the first B, and a start taken from a wrong spacing (half
    the true B at 4 cm-1 resolution, say) made the plausibility test hold ω_e x_e of CO at
    2.6 cm-1 (13.3), which biased B by 5 standard errors with the fit "ok"."""
    nu = theta.get("band_origin", 0.0)
    B = theta.get("B_e", theta.get("B_lower", 0.0))
    if name == "omega_e_x_e" and "alpha_e" in theta:
        new = pekeris_wexe(B, theta["alpha_e"], nu, band)
    elif name in ("D", "D_e", "D_upper", "D_lower"):
        new = kratzer_d(B, nu)
    else:
        return None
    return float(new) if new > 0 and math.isfinite(new) else None


def _verdict(run, k: int, p, se: float, B: float) -> tuple[bool, bool, bool, float]:
    """(hold, at a bound, implausibly moved, relevance scale) of secondary parameter k."""
    f = run.fitter
    scale = relevance(p.name, f.theta[k], p.value, B, run.step)
    at_bound = f.theta[k] <= p.lower + 1e-12 or f.theta[k] >= p.upper - 1e-12
    moved = (p.name.split("(")[0] in PLAUSIBILITY_NAMES
             and abs(f.theta[k] - p.value) > IMPLAUSIBLE_SHIFT * scale)
    hold = (se > scale or not np.isfinite(se) or (at_bound and p.name != "lorentz_hwhm")
            or moved)
    return hold, at_bound, moved, scale


def _second_estimate(run, k: int, p, se: float, B: float):
    """Before an estimated ω_e x_e or D is held as implausible, its estimate is made
    again from the fitted constants (:func:`estimate_again`) and the verdict
    taken again: the first estimate came from the first B, which can be far off (only
    then does the start change, so other fits are computed as before)."""
    if not p.source.startswith("estimated"):
        return _verdict(run, k, p, se, B)
    th = dict(zip(run.model.names, run.fitter.theta, strict=True))
    new = estimate_again(p.name, th, run.opts.bands[0])
    if new is None or new == p.value:
        return _verdict(run, k, p, se, B)
    old = p.value, p.source
    p.value, p.source = new, "estimated (again, from the fitted B)"
    out = _verdict(run, k, p, se, B)
    if out[0] and not out[2] and out[1]:
        p.value, p.source = old  # held at a bound either way: keep the first estimate
    return out


def hold_undetermined(run) -> list[str]:
    """Hold the free secondary parameters of a :class:`.stages.Run` that the data do not
    determine, that sit on a bound or that moved implausibly far (the names held now; the
    reasons in ``run.held``, the parameter notes and a message)."""
    f = run.fitter
    cov, *_ = f.covariance()
    B = run._b_scale()
    newly = []
    for k, p in enumerate(run.params):
        if not (p.vary and p.secondary) or p.name.startswith("baseline_"):
            continue
        se = math.sqrt(max(cov[k, k], 0.0))
        hold, at_bound, moved, scale = _verdict(run, k, p, se, B)
        if moved and run.opts.second_look:
            hold, at_bound, moved, scale = _second_estimate(run, k, p, se, B)
        if hold:
            start, went = p.value, float(f.theta[k])
            p.vary = False
            f.theta[k] = start
            why = ("at its bound" if at_bound else
                   f"implausible: it went to {went:.4g} from {start:.4g}, further than "
                   f"{IMPLAUSIBLE_SHIFT:g} x {scale:.2g}" if moved else
                   f"not determined by the data (standard error {se:.2g} > {scale:.2g})")
            run.held[p.name] = why
            p.note = f"held at its start value {start:.6g}: {why}"
            newly.append(p.name)
        elif p.name == "lorentz_hwhm" and at_bound:
            p.vary = False
            run.held[p.name] = "at zero"
            p.note = "held at 0: the lines show no Lorentzian width"
            newly.append(p.name)
    if newly:
        run.messages.append("held " + ", ".join(f"{n} ({run.held[n]})" for n in newly))
    return newly
