"""The state of one band of a linear molecule during its search, and what it predicts
(private; split from :mod:`._linear_search`, no change of behaviour)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ._linear_model import BandSpec, ConstantsFit, Template
from ._linear_seed import full_vector
from ._lsq import robust_scale

__all__ = ["BandState", "predict", "lower_energy", "strength_factor"]

#: lines predicted beyond the highest J assigned so far
_GROW = 4


@dataclass
class BandState:
    """One band's assignment: per observed line the template index (−1: none)."""

    spec: BandSpec
    jmax: int
    fit: ConstantsFit | None
    start: dict
    t: Template | None = None
    idx: np.ndarray | None = None  # obs -> template index or −1
    outlier: np.ndarray | None = None
    blended: np.ndarray | None = None
    blend_with: list = field(default_factory=list)
    calc: np.ndarray | None = None
    calc_err: np.ndarray | None = None
    intensity: tuple | None = None  # (a, b, s, rms) of ln(area/strength) = a + b E″
    rounds: int = 0
    score: float = -np.inf
    scatter: float = 1.0
    reps: np.ndarray | None = None  # template index of each composite line
    rows: np.ndarray | None = None  # design row of each composite line
    count: np.ndarray | None = None  # template lines in each composite line
    holes: int = 0  # expected lines not seen

    @property
    def values(self) -> dict:
        return self.fit.values if self.fit is not None else dict(self.start)

    def assigned(self) -> np.ndarray:
        return self.idx >= 0 if self.idx is not None else np.zeros(0, dtype=bool)

    def good(self) -> np.ndarray:
        return self.assigned() & ~self.outlier & ~self.blended


def predict(spec: BandSpec, A_full: np.ndarray, values: dict, fit: ConstantsFit | None):
    """Positions (and errors, zero without a fit) of design rows."""
    if fit is not None:
        return fit.predict(spec, A_full)
    return A_full @ full_vector(spec, values), np.zeros(len(A_full))


def lower_energy(spec: BandSpec, t: Template, values: dict) -> np.ndarray:
    """E″ (rotational part, cm⁻¹) of each template line's lower level."""
    J = t.J_lower.astype(float)
    l = 0 if spec.rotational else spec.lower.l
    x = J * (J + 1) - l * l
    B = values.get("B", values.get("B_lower", 1.0))
    D = values.get("D", values.get("D_lower", 0.0))
    return B * x - D * x * x


def strength_factor(spec: BandSpec, t: Template, position: np.ndarray) -> np.ndarray:
    """Everything in a line's intensity but the Boltzmann factor: spin weight × Hönl–London × ν
    (absorption) or spin weight × (2J″+1) × Placzek–Teller (+ isotropic part) for Raman."""
    f = t.weight * t.factor
    if spec.process == "raman":
        return f * (2 * t.J_lower + 1)
    return f * np.abs(position)


def _intensity_model(spec, t, reps, rows_t, obs, use, values):
    """ln(area/strength) = a + b E″ from the lines ``use`` (obs index -> group), or None."""
    oi = np.nonzero(use)[0]
    a = obs.area[oi]
    ok = np.isfinite(a) & (a > 0)
    if ok.sum() < 5:
        return None
    oi = oi[ok]
    tg = reps[rows_t[oi]]
    sub = Template(*(getattr(t, f)[tg] for f in Template.__dataclass_fields__))
    E = lower_energy(spec, sub, values)
    y = np.log(obs.area[oi] / strength_factor(spec, sub, obs.x[oi]))
    A = np.column_stack([np.ones(len(E)), E])
    keep = np.ones(len(y), dtype=bool)
    for _ in range(4):  # a few mismatched lines must not tilt the envelope
        coef, *_ = np.linalg.lstsq(A[keep], y[keep], rcond=None)
        r = y - A @ coef
        sc = robust_scale(r[keep])
        new = np.abs(r) <= max(3 * sc, 0.2)
        if np.array_equal(new, keep) or new.sum() < 5:
            break
        keep = new
    if not coef[1] < 0:
        return None
    return float(coef[0]), float(coef[1]), max(0.3, 1.5 * robust_scale(r[keep])), \
        float(np.sqrt(np.mean(r[keep] ** 2)))
