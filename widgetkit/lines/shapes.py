"""Area-normalised line shapes with analytic partial derivatives.

Every shape is a pure function of ``x`` and its parameters, parameterised by
**area** (integrated intensity, what spectroscopists report) and **position**
(the centre, cm⁻¹), plus its widths:

* ``gaussian``: ``sigma`` (standard deviation, cm⁻¹)
* ``lorentzian``: ``gamma`` (half width at half maximum, cm⁻¹)
* ``voigt``: ``sigma`` and ``gamma`` (the Gaussian and Lorentzian parts)
* ``pseudo_voigt``: ``sigma`` and ``gamma`` as for the Voigt, mixed by the
  Thompson–Cox–Hastings formulas (J. Appl. Cryst. 20 (1987) 79)

Each shape provides ``profile(x, area, position, *widths)`` and
``gradient(x, area, position, *widths)``; the latter returns the profile and
its partial derivatives, shape ``(3 + n_widths, n)``: the profile, then
d/d area, d/d position and d/d each width. Parameters broadcast against ``x``, so one call evaluates
many lines at once (the fast path concatenates every line's window).
Derived quantities (``height``, ``fwhm``) and their gradients with respect to
(area, widths) serve the uncertainty propagation in :mod:`.derived`.

The registry :data:`SHAPES` maps the stored name to the :class:`Shape`; a
session stores the name, never code.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from scipy import constants
from scipy.special import wofz

__all__ = [
    "Shape",
    "SHAPES",
    "get_shape",
    "gaussian",
    "lorentzian",
    "voigt",
    "pseudo_voigt",
    "voigt_fwhm",
    "olivero_fwhm",
    "tch_parameters",
    "doppler_sigma",
    "SIGMA_TO_FWHM",
]

SQRT2 = np.sqrt(2.0)
SQRT2PI = np.sqrt(2.0 * np.pi)
SQRTPI = np.sqrt(np.pi)
#: FWHM of a Gaussian in units of its sigma, 2·sqrt(2 ln 2)
SIGMA_TO_FWHM = 2.0 * np.sqrt(2.0 * np.log(2.0))

# Thompson, Cox & Hastings, J. Appl. Cryst. 20 (1987) 79, eqs. for Γ and η
_TCH_F = (1.0, 2.69269, 2.42843, 4.47163, 0.07842, 1.0)
_TCH_ETA = (1.36603, -0.47719, 0.11116)


# --------------------------------------------------------------------- Gaussian
def _gauss_grad(x, area, position, sigma):
    u = (x - position) / sigma
    g = np.exp(-0.5 * u * u) / (sigma * SQRT2PI)
    v = area * g
    return np.stack([v, g, v * u / sigma, v * (u * u - 1.0) / sigma])


def gaussian(x, area, position, sigma):
    """Gaussian ``area/(sigma*sqrt(2*pi)) * exp(-(x-position)**2/(2*sigma**2))``."""
    u = (np.asarray(x, dtype=float) - position) / sigma
    return area * np.exp(-0.5 * u * u) / (sigma * SQRT2PI)


# ------------------------------------------------------------------- Lorentzian
def _lorentz_grad(x, area, position, gamma):
    d = x - position
    q = 1.0 / (d * d + gamma * gamma)
    l0 = gamma * q / np.pi
    v = area * l0
    return np.stack([v, l0, v * 2.0 * d * q, area * (d * d - gamma * gamma) * q * q / np.pi])


def lorentzian(x, area, position, gamma):
    """Lorentzian ``(area/pi) * gamma / ((x-position)**2 + gamma**2)``, gamma the HWHM."""
    d = np.asarray(x, dtype=float) - position
    return area * gamma / (np.pi * (d * d + gamma * gamma))


# ------------------------------------------------------------------------ Voigt
def _voigt_grad(x, area, position, sigma, gamma):
    s2 = sigma * SQRT2
    z = (x - position + 1j * gamma) / s2
    w = wofz(z)
    pref = 1.0 / (sigma * SQRT2PI)
    v0 = pref * w.real
    v = area * v0
    dw = -2.0 * z * w + 2j / SQRTPI  # w'(z) = -2 z w(z) + 2i/sqrt(pi)
    ap = area * pref
    d_pos = ap * (-dw.real / s2)
    d_gam = ap * (-dw.imag / s2)  # Re(i·w'/s2) = -Im(w')/s2
    d_sig = ap * (-(dw * z).real / sigma) - v / sigma
    return np.stack([v, v0, d_pos, d_sig, d_gam])


def voigt(x, area, position, sigma, gamma):
    """Voigt ``area * Re w(z) / (sigma*sqrt(2*pi))``, ``z = (x-position+i*gamma)/(sigma*sqrt(2))``.

    ``w`` is the Faddeeva function (:func:`scipy.special.wofz`); equals
    ``area * scipy.special.voigt_profile(x - position, sigma, gamma)``.
    """
    z = (np.asarray(x, dtype=float) - position + 1j * gamma) / (sigma * SQRT2)
    return area * wofz(z).real / (sigma * SQRT2PI)


def olivero_fwhm(sigma, gamma):
    """Olivero–Longbothum approximation of the Voigt FWHM (JQSRT 17 (1977) 233).

    ``f_V ≈ 0.5346 f_L + sqrt(0.2166 f_L**2 + f_G**2)`` with ``f_G = 2 sigma sqrt(2 ln 2)``
    and ``f_L = 2 gamma``; stated accuracy about 0.02 %. For reference only:
    widgetkit reports the exact :func:`voigt_fwhm`.
    """
    fg = SIGMA_TO_FWHM * np.asarray(sigma, dtype=float)
    fl = 2.0 * np.asarray(gamma, dtype=float)
    return 0.5346 * fl + np.sqrt(0.2166 * fl * fl + fg * fg)


def voigt_fwhm(sigma, gamma):
    """Exact FWHM of the Voigt profile, solved numerically.

    Solves ``V(h) = V(0)/2`` for the half width ``h`` by Newton's method
    (``dV/dx`` from ``w'(z)``), started from :func:`olivero_fwhm`; converges
    to machine precision in a few steps. Vectorised over ``sigma``, ``gamma``.
    """
    sigma, gamma = np.broadcast_arrays(np.asarray(sigma, float), np.asarray(gamma, float))
    s2 = sigma * SQRT2
    half = 0.5 * wofz(1j * gamma / s2).real
    h = 0.5 * olivero_fwhm(sigma, gamma)
    for _ in range(8):
        z = (h + 1j * gamma) / s2
        w = wofz(z)
        dw = -2.0 * z * w + 2j / SQRTPI
        step = (w.real - half) / (dw.real / s2)
        h = h - step
        if np.all(np.abs(step) <= 1e-15 * np.abs(h)):
            break
    return 2.0 * h


def _voigt_fwhm_grad(sigma, gamma):
    """FWHM and its partials (d/dsigma, d/dgamma) by implicit differentiation."""
    f = voigt_fwhm(sigma, gamma)
    h = 0.5 * f
    g_h = _voigt_grad(np.stack([h, np.zeros_like(h)]), 1.0, 0.0, sigma, gamma)
    # g(h) = V(h) - V(0)/2 = 0 ; dV/dh = -dV/dposition
    dgdh = -g_h[2, 0]
    dgds = g_h[3, 0] - 0.5 * g_h[3, 1]
    dgdg = g_h[4, 0] - 0.5 * g_h[4, 1]
    return f, np.stack([-2.0 * dgds / dgdh, -2.0 * dgdg / dgdh])


# ----------------------------------------------------------------- pseudo-Voigt
def tch_parameters(sigma, gamma):
    """Thompson–Cox–Hastings total FWHM ``f`` and Lorentzian fraction ``eta``.

    ``f = (fG^5 + 2.69269 fG^4 fL + 2.42843 fG^3 fL^2 + 4.47163 fG^2 fL^3
    + 0.07842 fG fL^4 + fL^5)^(1/5)`` and ``eta = 1.36603 q - 0.47719 q^2
    + 0.11116 q^3`` with ``q = fL/f``, ``fG = 2 sigma sqrt(2 ln 2)``,
    ``fL = 2 gamma`` (J. Appl. Cryst. 20 (1987) 79).
    """
    f, eta, _ = _tch_with_grad(np.asarray(sigma, float), np.asarray(gamma, float))
    return f, eta


def _tch_with_grad(sigma, gamma):
    fg = SIGMA_TO_FWHM * sigma
    fl = 2.0 * gamma
    c = _TCH_F
    p = sum(c[k] * fg ** (5 - k) * fl**k for k in range(6))
    dp_dfg = sum(c[k] * (5 - k) * fg ** (4 - k) * fl**k for k in range(5))
    dp_dfl = sum(c[k] * k * fg ** (5 - k) * fl ** (k - 1) for k in range(1, 6))
    f = p**0.2
    df_dp = 0.2 * f / p
    df_ds = df_dp * dp_dfg * SIGMA_TO_FWHM
    df_dg = df_dp * dp_dfl * 2.0
    q = fl / f
    a1, a2, a3 = _TCH_ETA
    eta = a1 * q + a2 * q * q + a3 * q**3
    deta_dq = a1 + 2 * a2 * q + 3 * a3 * q * q
    dq_ds = -fl / (f * f) * df_ds
    dq_dg = 2.0 / f - fl / (f * f) * df_dg
    return f, eta, (df_ds, df_dg, deta_dq * dq_ds, deta_dq * dq_dg)


def _pv_grad(x, area, position, sigma, gamma):
    f, eta, (df_ds, df_dg, de_ds, de_dg) = _tch_with_grad(sigma, gamma)
    sg = f / SIGMA_TO_FWHM
    gl = 0.5 * f
    G = _gauss_grad(x, 1.0, position, sg)
    L = _lorentz_grad(x, 1.0, position, gl)
    v0 = eta * L[0] + (1.0 - eta) * G[0]
    dv_df = area * (eta * L[3] * 0.5 + (1.0 - eta) * G[3] / SIGMA_TO_FWHM)
    dv_de = area * (L[0] - G[0])
    return np.stack([
        area * v0,
        v0,
        area * (eta * L[2] + (1.0 - eta) * G[2]),
        dv_df * df_ds + dv_de * de_ds,
        dv_df * df_dg + dv_de * de_dg,
    ])


def pseudo_voigt(x, area, position, sigma, gamma):
    """Pseudo-Voigt ``area * (eta*L(x; f/2) + (1-eta)*G(x; f/(2 sqrt(2 ln 2))))``.

    Both components have FWHM ``f``; ``f`` and ``eta`` come from ``sigma`` and
    ``gamma`` by :func:`tch_parameters` (Thompson–Cox–Hastings 1987).
    """
    f, eta = tch_parameters(sigma, gamma)
    x = np.asarray(x, dtype=float)
    return area * (eta * lorentzian(x, 1.0, position, 0.5 * f)
                   + (1.0 - eta) * gaussian(x, 1.0, position, f / SIGMA_TO_FWHM))


# ------------------------------------------------------------------ far wings
def _voigt_wing(x, area, position, sigma, gamma):
    # Re w(z) ~ Re(i / (sqrt(pi) z)) for |z| >> 1: the Lorentzian; relative error ~ sigma²/d²
    return lorentzian(x, area, position, gamma)


def _pv_wing(x, area, position, sigma, gamma):
    f, eta = tch_parameters(sigma, gamma)
    return eta * lorentzian(x, area, position, 0.5 * f)  # the Gaussian part is ~0 there


# -------------------------------------------------------------------- registry
def _fwhm_gauss(sigma):
    return SIGMA_TO_FWHM * sigma, np.stack([np.full_like(sigma, SIGMA_TO_FWHM)])


def _fwhm_lorentz(gamma):
    return 2.0 * gamma, np.stack([np.full_like(gamma, 2.0)])


def _fwhm_pv(sigma, gamma):
    f, _, (df_ds, df_dg, _, _) = _tch_with_grad(sigma, gamma)
    return f, np.stack([df_ds, df_dg])


@dataclass(frozen=True)
class Shape:
    """A registered line shape.

    Attributes
    ----------
    name : str
        Registry name, stored in sessions.
    widths : tuple of str
        Width parameter names in order (``"sigma"``, ``"gamma"``).
    profile : callable
        ``profile(x, area, position, *widths) -> ndarray``.
    gradient : callable
        ``gradient(x, area, position, *widths) -> ndarray (3 + n_widths, n)``:
        row 0 the profile, then d/d area, d/d position, d/d widths.
    fwhm_grad : callable
        ``fwhm_grad(*widths) -> (fwhm, d fwhm / d widths (n_widths, ...))``.
    lorentz_wings : bool
        True when the far wings fall as 1/x² (windows must be wide).
    wing : callable or None
        ``wing(x, area, position, *widths)``: the far-wing form used outside
        the evaluation windows (the Lorentzian part; None for a Gaussian).
    """

    name: str
    widths: tuple[str, ...]
    profile: Callable[..., np.ndarray]
    gradient: Callable[..., np.ndarray]
    fwhm_grad: Callable[..., tuple[np.ndarray, np.ndarray]]
    lorentz_wings: bool
    wing: Callable[..., np.ndarray] | None = None

    @property
    def param_names(self) -> tuple[str, ...]:
        """``("area", "position", *widths)``."""
        return ("area", "position", *self.widths)

    def fwhm(self, *widths) -> np.ndarray:
        """Full width at half maximum from the widths (cm⁻¹)."""
        return self.fwhm_grad(*[np.asarray(w, float) for w in widths])[0]

    def approx_fwhm(self, *widths) -> np.ndarray:
        """FWHM for sizing windows: exact, except Olivero–Longbothum for the Voigt."""
        if self.name == "voigt":
            return olivero_fwhm(*widths)
        return self.fwhm(*widths)

    def height(self, area, *widths) -> np.ndarray:
        """Peak height, the profile's value at its own position (y units)."""
        return self.profile(0.0, area, 0.0, *widths)

    def widths_from_fwhm(self, fwhm) -> tuple[np.ndarray, ...]:
        """Starting widths giving roughly this FWHM (Voigt: half from each part)."""
        fwhm = np.asarray(fwhm, float)
        if self.widths == ("sigma",):
            return (fwhm / SIGMA_TO_FWHM,)
        if self.widths == ("gamma",):
            return (0.5 * fwhm,)
        # f_V ≈ 0.5346 f_L + sqrt(0.2166 f_L² + f_G²) with f_L = f_G/... : take
        # f_G = f_L = fwhm/1.6376 (equal parts) as a neutral start
        part = fwhm / 1.6376
        return (part / SIGMA_TO_FWHM, 0.5 * part)


SHAPES: dict[str, Shape] = {
    "gaussian": Shape("gaussian", ("sigma",), gaussian, _gauss_grad, _fwhm_gauss, False),
    "lorentzian": Shape("lorentzian", ("gamma",), lorentzian, _lorentz_grad, _fwhm_lorentz,
                        True, lorentzian),
    "voigt": Shape("voigt", ("sigma", "gamma"), voigt, _voigt_grad, _voigt_fwhm_grad, True,
                   _voigt_wing),
    "pseudo_voigt": Shape("pseudo_voigt", ("sigma", "gamma"), pseudo_voigt, _pv_grad,
                          _fwhm_pv, True, _pv_wing),
}


def get_shape(name: str) -> Shape:
    """The registered :class:`Shape` called ``name``; FitError names the choices."""
    from ..errors import FitError

    try:
        return SHAPES[name]
    except (KeyError, TypeError):
        raise FitError(f"unknown line shape {name!r} (parameter 'shape'); choose one of "
                       f"{', '.join(sorted(SHAPES))}") from None


def doppler_sigma(position, temperature, mass):
    """Gaussian (Doppler) sigma of a line: ``sigma_D = position * sqrt(k T / (m c^2))``.

    Parameters
    ----------
    position : float or ndarray
        Line position, cm⁻¹.
    temperature : float
        Kelvin.
    mass : float
        Molecular mass in unified atomic mass units (u, g/mol).

    Returns
    -------
    float or ndarray
        sigma in cm⁻¹ (FWHM = 2 sqrt(2 ln 2) sigma ≈ 7.162e-7 position sqrt(T/M)).
    """
    m = mass * constants.atomic_mass
    return np.asarray(position, float) * np.sqrt(constants.k * temperature / (m * constants.c**2))
