"""Band models of linear molecules for the assignment (private): which lines a band has
(selection rules and spin statistics of :mod:`.linear_terms`), their positions as a linear
function of the band constants, and the weighted least-squares fit of those constants.

Positions (cm⁻¹), with x = J(J+1) − ℓ² and s = +1 for e, −1 for f levels::

    ν = ν₀ + [B′x′ − D′x′² + s′ q′ J′(J′+1)/2] − [B″x″ − D″x″² + s″ q″ J″(J″+1)/2]

linear in (ν₀, B′, B″, D′, D″, q′, q″); q′ only for ℓ′ ≥ 1, q″ only for ℓ″ ≥ 1. A pure
rotational Raman band (one level) has ν = ν_z ± [F(J+2) − F(J)] (+ Stokes, − anti-Stokes)
with F = B x − D x² and ν_z the position of zero shift (0 on a well calibrated axis).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import AssignmentError
from ._lsq import LinearFit, SingularDesign, weighted_lstsq
from .linear_terms import VibLevel, allowed_lines

__all__ = ["Obs", "BandSpec", "Template", "template", "design", "fit_constants", "ConstantsFit"]


@dataclass(frozen=True)
class Obs:
    """Observed lines (input order): positions, errors (None: unknown), areas, widths."""

    ids: np.ndarray
    x: np.ndarray
    sigma: np.ndarray | None
    area: np.ndarray
    fwhm: np.ndarray | None

    @property
    def n(self) -> int:
        return len(self.x)


@dataclass(frozen=True)
class BandSpec:
    """One band to look for.

    Attributes
    ----------
    name : str
        ``"fundamental"``, ``"hot"``, ``"rotational"``.
    lower, upper : VibLevel
        Symmetry carriers (ℓ, inversion, reflection); their constants are only starting values.
    process : {"ir", "raman"}
    rotational : bool
        A pure rotational Raman band (upper is lower).
    """

    name: str
    lower: VibLevel
    upper: VibLevel
    process: str = "ir"
    rotational: bool = False

    @property
    def names(self) -> tuple[str, ...]:
        """The constants of the full model."""
        if self.rotational:
            return ("zero_offset", "B", "D")
        out = ["band_origin", "B_upper", "B_lower", "D_upper", "D_lower"]
        if self.upper.l >= 1:
            out.append("q_upper")
        if self.lower.l >= 1:
            out.append("q_lower")
        return tuple(out)


@dataclass(frozen=True)
class Template:
    """The lines of a band up to some J (arrays of equal length)."""

    J_lower: np.ndarray
    J_upper: np.ndarray
    comp_lower: np.ndarray
    comp_upper: np.ndarray
    branch: np.ndarray
    sign: np.ndarray  # +1 Stokes / absorption, −1 anti-Stokes
    factor: np.ndarray  # Hönl–London or Placzek–Teller (+1 isotropic for vibrational Raman Q)
    weight: np.ndarray  # nuclear-spin weight of the lower level

    def __len__(self) -> int:
        return len(self.J_lower)

    def labels(self, spec: BandSpec) -> list[str]:
        both = spec.lower.l >= 1 and spec.upper.l >= 1
        return [f"{b}({j}){c if both else ''}" for b, j, c in
                zip(self.branch.tolist(), self.J_lower.tolist(), self.comp_lower.tolist())]


def template(spec: BandSpec, isotopologue, J_max: int, *, anti_stokes: bool = False) -> Template:
    """Every line of ``spec`` with lower J ≤ ``J_max`` (pure rotational: S lines only, and
    their anti-Stokes partners when asked)."""
    ls = allowed_lines(spec.lower, spec.upper, isotopologue, J_max, process=spec.process)
    keep = np.ones(len(ls), dtype=bool)
    factor = ls.factor.copy()
    if spec.rotational:
        keep = ls.branch == "S"
    elif spec.process == "raman":
        factor = factor + np.where(ls.branch == "Q", 1.0, 0.0)
    cols = [ls.J_lower[keep], ls.J_upper[keep], ls.comp_lower[keep], ls.comp_upper[keep],
            ls.branch[keep], np.ones(int(keep.sum())), factor[keep], ls.weight[keep]]
    if anti_stokes:
        cols = [np.concatenate([c, c]) for c in cols]
        n = int(keep.sum())
        cols[5] = np.r_[np.ones(n), -np.ones(n)]
    return Template(*cols)


def _x(J, l):
    J = np.asarray(J, dtype=float)
    return J * (J + 1.0) - float(l) ** 2


def design(spec: BandSpec, t: Template, names: tuple[str, ...]) -> np.ndarray:
    """Design matrix (len(t), len(names)) of the positions (module docstring)."""
    Ju, Jl = t.J_upper.astype(float), t.J_lower.astype(float)
    su = np.where(t.comp_upper == "e", 1.0, -1.0)
    sl = np.where(t.comp_lower == "e", 1.0, -1.0)
    if spec.rotational:
        xu, xl = _x(Ju, 0), _x(Jl, 0)
        cols = {"zero_offset": np.ones(len(t)), "B": t.sign * (xu - xl),
                "D": -t.sign * (xu**2 - xl**2)}
    else:
        xu, xl = _x(Ju, spec.upper.l), _x(Jl, spec.lower.l)
        cols = {"band_origin": np.ones(len(t)), "B_upper": xu, "B_lower": -xl,
                "D_upper": -(xu**2), "D_lower": xl**2, "D": xl**2 - xu**2,
                "q_upper": su * Ju * (Ju + 1) / 2, "q_lower": -sl * Jl * (Jl + 1) / 2}
    return np.column_stack([cols[n] for n in names]) if len(t) else np.zeros((0, len(names)))


def _columns(spec: BandSpec, A_full: np.ndarray, names: tuple[str, ...]) -> np.ndarray:
    """Columns ``names`` from the full design (``"D"`` = D′ = D″ is the sum of both columns)."""
    full = list(spec.names)
    cols = []
    for n in names:
        if n == "D" and "D" not in full:
            cols.append(A_full[:, full.index("D_upper")] + A_full[:, full.index("D_lower")])
        else:
            cols.append(A_full[:, full.index(n)])
    return np.column_stack(cols) if cols else np.zeros((len(A_full), 0))


@dataclass(frozen=True)
class ConstantsFit:
    """Fitted constants of one band: parameter ``names``, the :class:`LinearFit`, and the
    constants held fixed at 0 because the lines did not determine them."""

    names: tuple[str, ...]
    fit: LinearFit
    fixed: tuple = ()
    centrifugal: str = "separate"
    shared_d: bool = False  # "D" stands for D′ = D″ (not the D of a rotational band)

    @property
    def values(self) -> dict[str, float]:
        out = dict.fromkeys(self.fixed, 0.0)
        for n, v in zip(self.names, self.fit.beta):
            if n == "D" and self.shared_d:
                out["D_upper"] = out["D_lower"] = float(v)
            else:
                out[n] = float(v)
        return out

    def stderr(self, name: str) -> float:
        key = "D" if name in ("D_upper", "D_lower") and self.shared_d else name
        if key in self.names:
            return float(self.fit.stderr[self.names.index(key)])
        return float("nan")

    def predict(self, spec: BandSpec, A_full: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Positions and their standard errors for rows of the full design."""
        A = _columns(spec, A_full, self.names)
        cov = self.fit.cov if np.all(np.isfinite(self.fit.cov)) else self.fit.cov_unscaled
        var = np.einsum("ij,jk,ik->i", A, cov, A)
        return A @ self.fit.beta, np.sqrt(np.clip(var, 0.0, None))


def _modes(spec: BandSpec, centrifugal: str) -> list[tuple[str, tuple[str, ...]]]:
    qs = tuple(n for n in spec.names if n.startswith("q_"))
    if spec.rotational:
        modes = [("separate", ("zero_offset", "B", "D")), ("none", ("zero_offset", "B"))]
        return modes if centrifugal != "none" else modes[1:]
    base = ("band_origin", "B_upper", "B_lower")
    order = {"separate": ["separate", "shared", "none"], "shared": ["shared", "none"],
             "none": ["none"]}
    if centrifugal not in order:
        raise AssignmentError(f"centrifugal must be 'separate', 'shared' or 'none', got {centrifugal!r}")
    cd = {"separate": ("D_upper", "D_lower"), "shared": ("D",), "none": ()}
    out = []
    for m in order[centrifugal]:
        out.append((m, base + cd[m] + qs))
        if qs:
            out.append((m, base + cd[m]))
    return out


def fit_constants(spec: BandSpec, A_full: np.ndarray, y: np.ndarray, sigma: np.ndarray | None, *,
                  centrifugal: str = "separate") -> ConstantsFit:
    """Weighted linear least squares of the band constants from rows of the full design;
    constants the lines cannot determine are dropped (q first, then the centrifugal terms)
    and held at 0 (listed in ``fixed``).

    Raises
    ------
    AssignmentError
        When not even ν₀, B′, B″ (or B of a rotational band) can be determined.
    """
    modes = _modes(spec, centrifugal)
    if spec.rotational and len(A_full) and (np.all(A_full[:, 1] > 0) or np.all(A_full[:, 1] < 0)):
        # lines on one side of the laser line only: the zero of the shift axis is taken as exact
        # (with Stokes lines alone it is nearly degenerate with B)
        modes = [(m, tuple(n for n in names if n != "zero_offset")) for m, names in modes]
    for mode, names in modes:
        if len(y) < len(names) + 1:
            continue
        try:
            f = weighted_lstsq(_columns(spec, A_full, names), y, sigma)
        except SingularDesign:
            continue
        shared = "D" in names and "D" not in spec.names
        used = set(names) | ({"D_upper", "D_lower"} if shared else set())
        return ConstantsFit(tuple(names), f, tuple(n for n in spec.names if n not in used), mode,
                            shared)
    raise AssignmentError(
        f"{len(y)} assigned lines do not determine the constants of the {spec.name} band "
        f"({', '.join(spec.names[:3])}); lines of more than one branch are needed: assign more "
        "lines or lock two of them by hand with s.set_assignment(line_id, label=...)")
