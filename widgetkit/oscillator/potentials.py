"""Potential energy curves V(r) of a diatomic for the numerical oscillator.

Units: r in Å, energies in cm⁻¹, reduced mass μ in u. The kinetic-energy
factor ħ²/(2μ) expressed in cm⁻¹ Å² is ``KINETIC / μ`` with

    KINETIC = h / (8 π² c u) = 16.857629... cm⁻¹ Å² u

(the same constant as in r_e² = 16.857629 / (μ B_e); CODATA values from
:mod:`scipy.constants`).

Three kinds of potential are offered; each is a small frozen value that only
becomes a function of r once the reduced mass is known (harmonic and Morse
are specified by spectroscopic constants, which depend on μ):

* :func:`harmonic` — V = ½ k (r − r_e)² with k from ω_e:
  V = ω_e² (r − r_e)² / (4 ħ²/(2μ)) in cm⁻¹ (ħ²/(2μ) in cm⁻¹ Å²).
* :func:`morse` — V = D_e (1 − exp(−a (r − r_e)))² (Morse, Phys. Rev. 34
  (1929) 57) with D_e = ω_e²/(4 ω_e x_e) and a = sqrt(ω_e x_e / (ħ²/(2μ))),
  which makes its exact levels G(v) = ω_e(v+½) − ω_e x_e (v+½)².
* :func:`tabulated` — points (r, V) joined by a cubic spline
  (:class:`scipy.interpolate.CubicSpline`, not-a-knot ends); V is taken
  relative to the spline's minimum and the grid stays inside the table.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.constants as sc
from scipy.interpolate import CubicSpline
from scipy.optimize import minimize_scalar

from ..errors import OscillatorError

__all__ = [
    "KINETIC",
    "OscillatorError",
    "Potential",
    "harmonic",
    "morse",
    "tabulated",
    "morse_parameters",
]

#: h/(8π² c u) in cm⁻¹ Å² u: ħ²/(2μ) in cm⁻¹ Å² is KINETIC / μ[u]
KINETIC = sc.h / (8.0 * math.pi**2 * sc.c * 100.0 * sc.atomic_mass) * 1e20


def _positive(name: str, value: Any) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise OscillatorError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(v) or v <= 0:
        raise OscillatorError(f"{name} must be a positive finite number, got {value!r}")
    return v


@dataclass(frozen=True)
class Potential:
    """A potential curve V(r); build one with :func:`harmonic`, :func:`morse`
    or :func:`tabulated`.

    Attributes
    ----------
    kind : {"harmonic", "morse", "tabulated"}
    params : dict
        The defining values (cm⁻¹, Å), JSON-able.
    """

    kind: str
    params: dict
    _spline: Any = field(default=None, repr=False, compare=False)
    _vmin: float = field(default=0.0, repr=False, compare=False)
    _rmin: float = field(default=0.0, repr=False, compare=False)

    def kinetic(self, reduced_mass: float) -> float:
        """ħ²/(2μ) in cm⁻¹ Å²."""
        return KINETIC / _positive("reduced_mass", reduced_mass)

    def energy(self, r, reduced_mass: float) -> np.ndarray:
        """V(r) in cm⁻¹ above the potential minimum, r in Å."""
        r = np.asarray(r, dtype=float)
        if self.kind == "harmonic":
            w = self.params["omega_e"]
            return w * w * (r - self.params["r_e"]) ** 2 / (4.0 * self.kinetic(reduced_mass))
        if self.kind == "morse":
            d, a = self._morse_da(reduced_mass)
            return d * (1.0 - np.exp(-a * (r - self.params["r_e"]))) ** 2
        return self._spline(r) - self._vmin

    def _morse_da(self, reduced_mass: float) -> tuple[float, float]:
        we, wx = self.params["omega_e"], self.params["omega_e_x_e"]
        return we * we / (4.0 * wx), math.sqrt(wx / self.kinetic(reduced_mass))

    def r_e(self, reduced_mass: float | None = None) -> float:
        """Position of the minimum (Å)."""
        return self._rmin if self.kind == "tabulated" else float(self.params["r_e"])

    def asymptote(self, reduced_mass: float) -> float:
        """Energy above the minimum beyond which levels are not bound (cm⁻¹).

        ``inf`` for the harmonic potential, D_e for Morse, and for a table the
        lower of its two end values (relative to the minimum).
        """
        if self.kind == "harmonic":
            return math.inf
        if self.kind == "morse":
            return self._morse_da(reduced_mass)[0]
        r = self.params["r"]
        return float(min(self.energy(r[0], 1.0), self.energy(r[-1], 1.0)))

    def domain(self, reduced_mass: float) -> tuple[float, float]:
        """The r range (Å) inside which a grid may be placed.

        For the harmonic and Morse curves it may reach r < 0 when the potential
        is very soft (a one-dimensional oscillator model); the solver keeps
        r > 0 when J > 0.
        """
        re = self.r_e()
        if self.kind == "tabulated":
            return float(self.params["r"][0]), float(self.params["r"][-1])
        if self.kind == "morse":
            _, a = self._morse_da(reduced_mass)
            # beyond r_e + 60/a, D_e - V(r) is below 2 D_e e^-60
            return re - 60.0 / a, re + 60.0 / a
        w = self.params["omega_e"]
        scale = math.sqrt(2.0 * self.kinetic(reduced_mass) / w)  # Å per unit of q
        return re - 200.0 * scale, re + 200.0 * scale

    def curvature_omega(self, reduced_mass: float) -> float:
        """Harmonic wavenumber (cm⁻¹) of the curvature at the minimum, sqrt(2 ħ²/(2μ) V'')."""
        if self.kind in ("harmonic", "morse"):
            return float(self.params["omega_e"])
        v2 = float(self._spline(self._rmin, 2))
        if v2 <= 0:
            raise OscillatorError("the tabulated potential has no curvature at its minimum")
        return math.sqrt(2.0 * self.kinetic(reduced_mass) * v2)

    def to_dict(self) -> dict:
        """JSON-able description (``kind`` and its parameters)."""
        p = {k: (list(map(float, v)) if isinstance(v, np.ndarray) else v)
             for k, v in self.params.items()}
        return {"kind": self.kind, **p}


def harmonic(omega_e: float, *, r_e: float = 1.0) -> Potential:
    """Harmonic potential V = ω_e² (r − r_e)² / (4 ħ²/(2μ)) (cm⁻¹, Å).

    Parameters
    ----------
    omega_e : float
        Harmonic wavenumber in cm⁻¹ (> 0).
    r_e : float
        Equilibrium distance in Å (default 1.0).
    """
    return Potential("harmonic", {"omega_e": _positive("omega_e", omega_e),
                                  "r_e": _positive("r_e", r_e)})


def morse(omega_e: float, omega_e_x_e: float, *, r_e: float = 1.0) -> Potential:
    """Morse potential V = D_e (1 − e^{−a(r − r_e)})² from spectroscopic constants.

    D_e = ω_e²/(4 ω_e x_e) and a = sqrt(ω_e x_e / (ħ²/(2μ))) (Morse, Phys. Rev. 34
    (1929) 57), so its exact levels are G(v) = ω_e(v+½) − ω_e x_e (v+½)² for
    v + ½ < ω_e/(2 ω_e x_e).

    Parameters
    ----------
    omega_e, omega_e_x_e : float
        cm⁻¹, both > 0.
    r_e : float
        Å (default 1.0).
    """
    return Potential("morse", {"omega_e": _positive("omega_e", omega_e),
                               "omega_e_x_e": _positive("omega_e_x_e", omega_e_x_e),
                               "r_e": _positive("r_e", r_e)})


def tabulated(r, V) -> Potential:
    """Potential through tabulated points, joined by a cubic spline.

    Parameters
    ----------
    r : array_like, shape (n,)
        Distances in Å, strictly ascending, n ≥ 5.
    V : array_like, shape (n,)
        Energies in cm⁻¹ (any zero; the result is taken relative to the
        minimum of the spline, which must lie inside the table).
    """
    r = np.array(r, dtype=float)
    V = np.array(V, dtype=float)
    if r.ndim != 1 or r.shape != V.shape:
        raise OscillatorError(f"r and V must be 1-d of equal length, got {r.shape} and {V.shape}")
    if r.size < 5:
        raise OscillatorError(f"a tabulated potential needs at least 5 points, got {r.size}")
    if not (np.all(np.isfinite(r)) and np.all(np.isfinite(V))):
        raise OscillatorError("r and V must be finite; remove NaN or inf points")
    if np.any(np.diff(r) <= 0):
        i = int(np.argmax(np.diff(r) <= 0))
        raise OscillatorError(
            f"r must be strictly ascending; r[{i}]={r[i]!r}, r[{i + 1}]={r[i + 1]!r}; sort the table"
        )
    k = int(np.argmin(V))
    if k == 0 or k == r.size - 1:
        raise OscillatorError(
            "the lowest tabulated point is at an end of the table; the table must include the "
            "minimum of the potential with points on both sides"
        )
    spline = CubicSpline(r, V)
    res = minimize_scalar(lambda x: float(spline(x)), bounds=(r[k - 1], r[k + 1]),
                          method="bounded", options={"xatol": 1e-12})
    rmin = float(res.x)
    vmin = float(spline(rmin))
    return Potential("tabulated", {"r": r, "V": V}, _spline=spline, _vmin=vmin, _rmin=rmin)


def morse_parameters(omega_e: float, omega_e_x_e: float, reduced_mass: float) -> dict:
    """The Morse potential implied by ω_e and ω_e x_e (Morse 1929).

    Returns
    -------
    dict with
        ``D_e`` (cm⁻¹) = ω_e²/(4 ω_e x_e); ``a`` (Å⁻¹) = sqrt(ω_e x_e μ / KINETIC);
        ``D_0`` (cm⁻¹) = D_e − G(0); ``n_bound`` = number of v with
        v + ½ < ω_e/(2 ω_e x_e); ``force_constant`` (N/m) = 4π² c² μ ω_e².
    """
    we = _positive("omega_e", omega_e)
    wx = _positive("omega_e_x_e", omega_e_x_e)
    mu = _positive("reduced_mass", reduced_mass)
    de = we * we / (4.0 * wx)
    g0 = 0.5 * we - 0.25 * wx
    vmax = we / (2.0 * wx) - 0.5
    n_bound = int(math.ceil(vmax)) if vmax > 0 else 0
    k = 4.0 * math.pi**2 * (sc.c * 100.0) ** 2 * mu * sc.atomic_mass * we * we
    return {"D_e": de, "a": math.sqrt(wx * mu / KINETIC), "D_0": de - g0,
            "n_bound": n_bound, "force_constant": k}
