"""Baselines fitted together with the lines.

Registered by name in :data:`BASELINES` (``None`` and ``"none"`` are the same):

=============== ======================================= =====================
name            public form (what is reported)          fitted internally
=============== ======================================= =====================
``none``        0                                       --
``constant``    b0                                      bl_c0
``linear``      b0 + b1 x                               bl_c0 + bl_c1 u
``poly2``       b0 + b1 x + b2 x²                       bl_c0 + bl_c1 u + bl_c2 u²
``exponential`` b0 exp(-b1 x)                           bl_c0 exp(-bl_b1 u)
=============== ======================================= =====================

with ``u = x - x_ref`` and ``x_ref`` the middle of the fitted data range.
Centring keeps the fit well conditioned at x of several thousand cm⁻¹ (an
uncentred ``b0 exp(-b1 x)`` at x = 3000 cm⁻¹ has ``b0`` of order e^(3000 b1));
the public coefficients and their standard errors are derived afterwards from
the covariance (:meth:`Baseline.public`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Baseline", "BASELINES", "get_baseline"]


@dataclass(frozen=True)
class Baseline:
    """A registered baseline model on the centred axis ``u = x - x_ref``.

    Attributes
    ----------
    name : str
        Registry name.
    params : tuple of str
        Internal lmfit parameter names, in order.
    public_names : tuple of str
        Names of the reported coefficients (``b0``, ``b1``, ``b2``).
    """

    name: str
    params: tuple[str, ...]
    public_names: tuple[str, ...]

    def evaluate(self, u: np.ndarray, c: np.ndarray) -> np.ndarray:
        """Baseline values at ``u`` for internal coefficients ``c``."""
        return self.gradient(u, c)[0]

    def gradient(self, u: np.ndarray, c: np.ndarray) -> np.ndarray:
        """Values and partials, shape ``(1 + len(params), len(u))``."""
        if self.name == "none":
            return np.zeros((1, u.size))
        if self.name == "exponential":
            e = np.exp(-c[1] * u)
            v = c[0] * e
            return np.stack([v, e, -u * v])
        powers = np.stack([u**k for k in range(len(self.params))])
        return np.concatenate([(c @ powers)[None, :], powers])

    def start(self, u: np.ndarray, y: np.ndarray) -> np.ndarray:
        """Least-squares starting coefficients from (line-free) points ``u, y``."""
        n = len(self.params)
        if n == 0:
            return np.zeros(0)
        if self.name == "exponential":
            if u.size >= 2 and np.all(y > 0):
                slope, icpt = np.polyfit(u, np.log(y), 1)
                return np.array([np.exp(icpt), -slope])
            return np.array([float(np.median(y)), 0.0])
        deg = min(n - 1, max(u.size - 1, 0))
        coef = np.polyfit(u, y, deg)[::-1] if u.size > 0 else np.zeros(1)
        out = np.zeros(n)
        out[: coef.size] = coef
        return out

    def public(self, c: np.ndarray, cov: np.ndarray | None, x_ref: float):
        """Public coefficients, their covariance-propagated standard errors.

        Returns
        -------
        values, stderr : ndarray
            ``stderr`` is NaN where ``cov`` is None.
        """
        n = len(self.params)
        if n == 0:
            return np.zeros(0), np.zeros(0)
        if self.name == "exponential":
            g = np.exp(c[1] * x_ref)
            vals = np.array([c[0] * g, c[1]])
            T = np.array([[g, c[0] * x_ref * g], [0.0, 1.0]])
        else:
            # sum_k c_k (x - r)^k = sum_j b_j x^j, b_j = sum_k c_k C(k, j) (-r)^(k-j)
            T = np.zeros((n, n))
            for k in range(n):
                for j in range(k + 1):
                    T[j, k] = _binom(k, j) * (-x_ref) ** (k - j)
            vals = T @ c
        if cov is None:
            return vals, np.full(n, np.nan)
        return vals, np.sqrt(np.clip(np.diag(T @ cov @ T.T), 0.0, None))


def _binom(n: int, k: int) -> float:
    from math import comb

    return float(comb(n, k))


BASELINES: dict[str | None, Baseline] = {
    "none": Baseline("none", (), ()),
    "constant": Baseline("constant", ("bl_c0",), ("b0",)),
    "linear": Baseline("linear", ("bl_c0", "bl_c1"), ("b0", "b1")),
    "poly2": Baseline("poly2", ("bl_c0", "bl_c1", "bl_c2"), ("b0", "b1", "b2")),
    "exponential": Baseline("exponential", ("bl_c0", "bl_b1"), ("b0", "b1")),
}
BASELINES[None] = BASELINES["none"]


def get_baseline(name: str | None) -> Baseline:
    """The registered :class:`Baseline`; FitError names the choices."""
    from ..errors import FitError

    try:
        return BASELINES[name]
    except (KeyError, TypeError):
        raise FitError(f"unknown baseline {name!r} (parameter 'baseline'); choose one of None, "
                       "'none', 'constant', 'linear', 'poly2', 'exponential'") from None
