"""A last solve weighted for absorbance computed from transmittance.

A spectrometer measures transmittance T with noise σ_T that hardly depends on T. The
absorbance A = −log10 T then has noise σ_A = σ_T / (T ln 10): at the centre of a line of
absorbance 1 the noise is ten times that of the baseline, and at absorbance 2 a hundred
times. An unweighted fit of A gives the tops of strong lines far too much say, and their
standard errors come out too small (measured on the stress corpus: positions off by 5-20 of
their standard errors at the tops of strong lines).

With ``weights="from_transmittance"`` the fit first runs unweighted as usual (peaks, pruning,
lines from the residual), then, if that converged or came close (as close as pruning asks:
:func:`.prune.not_judged`), once more from where it ended with each point weighted by
``1/σ_A(x) = 10^(−L(x)) / σ``, where ``L = model − baseline`` is the fitted absorbance of the
lines alone (taken from the fit, not from the noisy data, so that the weights carry no noise
of their own; capped at :data:`MAX_ABSORBANCE`) and σ is the noise of the line-free points,
where the baseline's own transmittance already sets the scale. Reference: the propagation of
an error through ``A = −log10 T`` (any text on error propagation; common practice).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["FROM_TRANSMITTANCE", "transmittance_weights", "refit_weighted", "MAX_ABSORBANCE"]

#: the ``weights`` value that asks for this
FROM_TRANSMITTANCE = "from_transmittance"
#: line absorbance above this is taken as this for the weights (T = 1e-4: no light left)
MAX_ABSORBANCE = 4.0


def transmittance_weights(lines_absorbance, sigma: float) -> np.ndarray:
    """``1/σ_A`` at each point from the lines' absorbance above the baseline (module
    docstring)."""
    a = np.clip(np.asarray(lines_absorbance, dtype=float), 0.0, MAX_ABSORBANCE)
    return 10.0 ** (-a) / float(sigma)


@dataclass
class WeightedStage:
    """The weighted solve, and its problem and fields (None when it failed)."""

    solution: object
    prob: object = None
    fields: dict | None = None
    flag: str = ""


def refit_weighted(prob, fields, *, shared_width, holds, args, budget, max_passes,
                   previous_converged: bool = False) -> WeightedStage:
    """Fit once more from ``fields``' values with :func:`transmittance_weights`, within
    ``budget``; not kept (``prob`` None, ``flag`` says why) when it stops short of its
    minimum and the fit before it had converged (``previous_converged``)."""
    from ._assemble import assemble
    from ._setup import set_up
    from ._solve import solve

    t = fields["table"]
    w = transmittance_weights(fields["model_y"] - fields["baseline_y"], prob.noise)
    prob2 = set_up(prob.xs, prob.ys, t["position"].to_numpy(float), shared_width=shared_width,
                   line_ids=list(prob.ids), heights=t["height"].to_numpy(float),
                   widths=t["fwhm"].to_numpy(float), noise=prob.noise, holds=holds or None,
                   background=prob.background,
                   **{**args, "region": None, "weights": w}, extra_spec={})
    sol = solve(prob2, budget, max_passes)
    if sol.error is not None or not np.isfinite(sol.result.chisqr):
        return WeightedStage(sol)
    if previous_converged and not sol.converged:  # never trade a converged fit for a cut one
        return WeightedStage(sol, flag="the weighted fit stopped before converging ("
                             f"{sol.stopped}); the unweighted fit is kept, and the errors of "
                             "its strongest lines may be too small")
    return WeightedStage(sol, prob2, assemble(prob2, sol))
