"""Scores and branch statistics of a refined band of a linear molecule (private; split from
:mod:`._linear_search`, no change of behaviour)."""

from __future__ import annotations

import numpy as np

from ._linear_model import BandSpec, Obs, Template
from ._linear_seed import cached, spacing_unit
from ._linear_state import BandState, lower_energy, strength_factor

__all__ = ["label_list", "so_i", "_holes", "branch_counts", "branch_balance", "_score"]


def label_list(spec: BandSpec, t: Template) -> list[str]:
    """Template labels; anti-Stokes lines of a rotational band get the suffix ``" aS"``."""
    return [lab + ("" if sg > 0 else " aS") for lab, sg in zip(t.labels(spec), t.sign.tolist())]


def so_i(obs: Obs, i: int) -> float:
    return float(obs.sigma[i]) if obs.sigma is not None else 0.0


def _holes(obs: Obs, st: BandState, iso) -> int:
    """Predicted lines, inside the observed range and the J range assigned, that the intensity
    envelope expects at least 1.5 times as strong as the weakest assigned line, yet are not
    seen (neither matched nor hidden in a blend)."""
    good = st.good() & np.isfinite(obs.area) & (obs.area > 0)
    if st.intensity is None or good.sum() < 5:
        return 0
    t, A = cached(st.spec, iso, st.jmax, st.spec.rotational)
    calc, _ = st.fit.predict(st.spec, A)
    inside = (calc >= obs.x.min()) & (calc <= obs.x.max())
    a, b = st.intensity[:2]
    expect = np.exp(a + b * lower_energy(st.spec, t, st.values)) * strength_factor(st.spec, t, calc)
    xs = np.sort(obs.x)
    k = np.clip(np.searchsorted(xs, calc), 1, len(xs) - 1)
    near = np.minimum(np.abs(xs[k] - calc), np.abs(xs[k - 1] - calc))
    unit = spacing_unit(st.spec, iso) * abs(st.values.get("B", st.values.get("B_lower", 1.0)))
    seen = near <= 0.3 * unit
    floor = 1.5 * float(np.min(obs.area[good]))
    return int(np.sum(inside & ~seen & (expect >= floor)))


def branch_counts(st: BandState) -> dict[str, int]:
    """Well-fitted lines per branch (and side)."""
    good = st.good()
    reps = st.reps[st.idx[good]]
    keys = [f"{b}{'' if sg > 0 else ' aS'}" for b, sg in zip(st.t.branch[reps].tolist(),
                                                             st.t.sign[reps].tolist())]
    out: dict[str, int] = {}
    for k in keys:
        out[k] = out.get(k, 0) + 1
    return out


def branch_balance(st: BandState) -> float:
    """min/max of the line counts of the two outer branches (P/R, O/S); 1 for a rotational band.
    A wrong J numbering can fit every line as one branch of a band whose other branch lies
    outside the spectrum: the positions alone cannot tell, the balance of the branches can."""
    if st.spec.rotational:
        return 1.0
    n = branch_counts(st)
    a, b = (n.get("P", 0), n.get("R", 0)) if st.spec.process == "ir" else (n.get("O", 0), n.get("S", 0))
    return min(a, b) / max(a, b, 1)


def _score(obs: Obs, st: BandState, temperature: float | None = None) -> float:
    good = st.good()
    score = float(good.sum()) - 0.5 * float(st.outlier.sum()) - 2.0 * st.holes
    f = st.fit.fit if st.fit is not None else None
    if f is not None and f.absolute and f.dof > 0:
        # positions that scatter far beyond their stated errors: a wrong pattern forced onto them
        birge = float(np.sqrt(max(f.reduced_chi2, 1e-12)))
        score -= float(good.sum()) * min(max(np.log10(birge) - 0.3, 0.0), 1.0)
    score += 0.2 * float(good.sum()) * min(branch_balance(st), 0.5)
    if st.spec.rotational:
        off = abs(st.values.get("zero_offset", 0.0)) / max(abs(st.values.get("B", 1.0)), 1e-9)
        score -= 2.0 * max(off - 1.0, 0.0)  # zero shift should be near 0 (within about B)
    if temperature is not None and st.intensity is not None and st.intensity[1] < 0:
        from .candidates import C2

        t_rot = -C2 / st.intensity[1]
        score -= min(((t_rot - temperature) / (0.25 * temperature)) ** 2, 20.0)
    if st.intensity is None and np.isfinite(obs.area[good]).sum() >= 5:
        score -= 5.0  # areas that rise with E″ or do not fit any envelope
    elif st.intensity is not None:
        # the envelope's scatter: its floored form, and its raw rms as a tie-breaker between J
        # numberings that fit the positions equally well
        score -= 10.0 * min(st.intensity[2] / 1.5, 1.0) + 2.0 * min(st.intensity[3], 1.0)
    return score
