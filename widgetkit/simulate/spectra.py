"""Synthetic spectra on a wavenumber grid from a line list.

Line shape: each line is a Voigt profile (``scipy.special.voigt_profile``)
with

* Gaussian σ = sqrt(σ_D² + σ_R²): Doppler σ_D = ν √(kT / (m c²)) (m the
  isotopologue's mass) and the instrument's Gaussian σ_R = FWHM_R / (2√(2 ln 2));
* Lorentzian HWHM γ = ``lorentz_hwhm`` (pressure broadening, cm⁻¹).

For speed the exact Voigt is evaluated only within ``window`` Voigt FWHMs
of each line centre (FWHM from Olivero and Longbothum, JQSRT 17 (1977) 233:
f_V ≈ 0.5346 f_L + sqrt(0.2166 f_L² + f_G²)); outside it the line's far wing
is its Lorentzian γ/(π(Δ² + γ²)), to which the Voigt tends as (σ/Δ)² → 0.

Scale: ``strength`` is the peak absorbance of the tallest single line (its own
profile maximum, before overlap, baseline and noise). Absorbance
A(x) = strength · Σ_i I_i V_i(x) / max_i(I_i V_i(0)) + baseline(x);
transmittance T = 10^(−A). Noise is Gaussian (standard deviation ``noise``,
in the units of y) from ``numpy.random.default_rng(seed)``, added last.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd
import scipy.constants as sc
from scipy.special import voigt_profile

from .. import __version__
from ..levels.molecule import Diatomic
from ..spectrum import Spectrum
from .lines import SimulationError, check_temperature, line_list

__all__ = ["doppler_sigma", "doppler_fwhm", "voigt_fwhm", "render_lines", "rovibrational",
           "vibrational", "render_spectrum", "check_render_params"]

_FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
_MAX_POINTS = 5_000_000


def doppler_sigma(position, temperature: float, mass: float):
    """Doppler Gaussian σ_D = ν √(kT/(m c²)) in cm⁻¹ (ν in cm⁻¹, T in K, m in u)."""
    t = check_temperature(temperature)
    m = np.asarray(mass, dtype=float) * sc.atomic_mass
    return np.asarray(position, dtype=float) * np.sqrt(sc.k * t / (m * sc.c**2))


def doppler_fwhm(position, temperature: float, mass: float):
    """Doppler FWHM = ν √(8 kT ln2 / (m c²)) = 2√(2 ln 2) σ_D (cm⁻¹)."""
    return _FWHM_PER_SIGMA * doppler_sigma(position, temperature, mass)


def voigt_fwhm(sigma, gamma):
    """Olivero–Longbothum (1977) FWHM of a Voigt with Gaussian σ and Lorentzian HWHM γ."""
    fg = _FWHM_PER_SIGMA * np.asarray(sigma, dtype=float)
    fl = 2.0 * np.asarray(gamma, dtype=float)
    return 0.5346 * fl + np.sqrt(0.2166 * fl * fl + fg * fg)


def render_lines(x: np.ndarray, position, area, sigma, gamma: float, *, window: float = 50.0):
    """Σ_i area_i · voigt_profile(x − position_i, σ_i, γ), windowed as in the module notes.

    ``x`` ascending (n,); ``position``, ``area``, ``sigma`` shape (L,); returns (n,).
    """
    y = np.zeros_like(x)
    fv = voigt_fwhm(sigma, gamma)
    half = window * fv
    lo = np.searchsorted(x, position - half)
    hi = np.searchsorted(x, position + half)
    for p, a, s, i0, i1 in zip(position, area, sigma, lo, hi, strict=True):
        if i1 > i0:
            y[i0:i1] += a * voigt_profile(x[i0:i1] - p, s, gamma)
        if gamma > 0:
            k = a * gamma / math.pi
            if i0 > 0:
                d = x[:i0] - p
                y[:i0] += k / (d * d + gamma * gamma)
            if i1 < x.size:
                d = x[i1:] - p
                y[i1:] += k / (d * d + gamma * gamma)
    return y


def _grid(x, x_range, step, lines: pd.DataFrame, fv_min: float, fv_max: float) -> np.ndarray:
    if x is not None:
        xs = np.asarray(x, dtype=float)
        if xs.ndim != 1 or xs.size < 3 or not np.all(np.isfinite(xs)) or np.any(np.diff(xs) <= 0):
            raise SimulationError("x must be a 1-d array of >= 3 finite, strictly ascending wavenumbers")
        return xs
    if step is not None and not (float(step) > 0):
        raise SimulationError(f"step must be a positive wavenumber interval (cm-1), got {step!r}")
    if x_range is None:
        pad = 5.0 + 20.0 * fv_max
        lo, hi = float(lines["position"].min()) - pad, float(lines["position"].max()) + pad
    else:
        try:
            lo, hi = (float(v) for v in x_range)
        except (TypeError, ValueError):
            raise SimulationError(f"x_range must be (low, high) in cm-1, got {x_range!r}") from None
        if not hi > lo:
            raise SimulationError(
                f"x_range must be (low, high) with low < high, got {x_range!r}; "
                "give the range ascending in cm-1"
            )
    st = float(step) if step is not None else fv_min / 5.0
    n = int(math.floor((hi - lo) / st + 1e-9)) + 1
    if n > _MAX_POINTS:
        raise SimulationError(
            f"the grid would have {n} points (range {lo:g}..{hi:g} cm-1, step {st:g}); "
            "give a larger step or a narrower x_range"
        )
    if n < 3:
        raise SimulationError(f"the grid would have only {n} points; give a smaller step")
    return lo + st * np.arange(n)


def _baseline(x: np.ndarray, baseline) -> np.ndarray:
    if baseline is None:
        return np.zeros_like(x)
    c = np.atleast_1d(np.asarray(baseline, dtype=float))
    if c.ndim != 1 or not np.all(np.isfinite(c)):
        raise SimulationError(
            "baseline must be None, a number or polynomial coefficients (c0, c1, ...) in "
            "t = (x - centre) / half-range"
        )
    mid, half = 0.5 * (x[0] + x[-1]), 0.5 * (x[-1] - x[0])
    return np.polynomial.polynomial.polyval((x - mid) / half, c)


def _jsonable(value):
    if isinstance(value, Diatomic) or hasattr(value, "to_dict"):
        return value.to_dict()
    if isinstance(value, Mapping):
        return {str(k): _jsonable(v) for k, v in value.items()}
    if isinstance(value, np.ndarray):
        return value.tolist() if value.dtype.kind in "fiub" else [_jsonable(v) for v in value.tolist()]
    if isinstance(value, (list, tuple)):
        return [_jsonable(v) for v in value]
    if isinstance(value, np.generic):
        return value.item()
    return value


def check_render_params(p: dict, y_kinds=("absorbance", "transmittance")) -> dict:
    """Validate the rendering parameters shared by every simulated spectrum; draw and record a
    noise seed when noise is asked for without one. Returns ``p`` (a copy when a seed was drawn)."""
    if p["y_kind"] not in y_kinds:
        raise SimulationError(f"y_kind must be {' or '.join(map(repr, y_kinds))}, got {p['y_kind']!r}")
    for name in ("strength", "lorentz_hwhm", "resolution", "noise", "window"):
        v = p[name]
        if not (isinstance(v, (int, float)) and math.isfinite(v) and v >= 0):
            raise SimulationError(f"{name} must be a finite number >= 0, got {v!r}")
    if not p["window"] >= 3:
        raise SimulationError(f"window must be at least 3 line widths, got {p['window']!r}")
    if p["seed"] is None and p["noise"] > 0:
        # recorded so the noise can be redrawn
        p = {**p, "seed": int(np.random.SeedSequence().entropy % 2**63)}
    return p


def render_spectrum(lines: pd.DataFrame, sigma_doppler: np.ndarray, p: dict, *, function: str,
                    title: str, meta: dict | None = None) -> Spectrum:
    """A simulated :class:`Spectrum` from a line table (``position``, ``intensity``).

    Gaussian σ = sqrt(σ_D² + σ_R²) per line, Lorentzian γ = ``p["lorentz_hwhm"]``; y =
    strength · Σ profiles / tallest single line + baseline (absorbance, or 10^(−A) for
    transmittance, or scattered intensity), then Gaussian noise; ``meta["simulated"]`` records
    the function, every parameter and the widgetkit version.
    """
    pos = lines["position"].to_numpy()
    area = lines["intensity"].to_numpy()
    sigma = np.sqrt(sigma_doppler**2 + (p["resolution"] / _FWHM_PER_SIGMA) ** 2)
    gamma = float(p["lorentz_hwhm"])
    fv = voigt_fwhm(sigma, gamma)
    x = _grid(p["x"], p["x_range"], p["step"], lines, float(fv.min()), float(fv.max()))
    peaks = area * voigt_profile(0.0, sigma, gamma)
    scale = p["strength"] / float(peaks.max())
    a = scale * render_lines(x, pos, area, sigma, gamma, window=p["window"]) + _baseline(x, p["baseline"])
    y = 10.0 ** (-a) if p["y_kind"] == "transmittance" else a
    if p["noise"] > 0:
        y = y + np.random.default_rng(p["seed"]).normal(0.0, p["noise"], size=x.size)
    out = {"title": title, **(meta or {}),
           "simulated": {"function": f"widgetkit.simulate.{function}",
                         "params": _jsonable(p),
                         "widgetkit_version": __version__,
                         "n_lines": int(len(lines))}}
    return Spectrum(x, y, y_kind=p["y_kind"], meta=out)


def _simulate(function: str, params: dict, *, title: str | None, rotational: bool = True) -> Spectrum:
    p = check_render_params(params)
    lines = line_list(p["molecule"], p["constants"], bands=p["bands"], temperature=p["temperature"],
                      J_max=p["J_max"], min_relative=p["min_relative"],
                      herman_wallis=p["herman_wallis"], q_branch=p.get("q_branch", False),
                      dipole=p["dipole"])
    if not rotational:
        lines = (lines.assign(w=lines["intensity"] * lines["position"])
                 .groupby(["isotopologue", "band", "v_upper", "v_lower"], as_index=False)
                 .agg(intensity=("intensity", "sum"), w=("w", "sum"), mass=("mass", "first")))
        lines = lines.assign(position=lines["w"] / lines["intensity"])
    sig_d = doppler_sigma(lines["position"].to_numpy(), p["temperature"], lines["mass"].to_numpy())
    mol = p["molecule"]
    name = title or (f"simulated {mol.atoms[0]}{mol.atoms[1]} "
                     f"{', '.join(f'{a}-{b}' for a, b in p['bands'])} at {p['temperature']:g} K")
    return render_spectrum(lines, sig_d, p, function=function, title=name)


def rovibrational(molecule: Diatomic, constants: Mapping[str, float], *, x=None, x_range=None,
                  step: float | None = None, bands: Sequence[tuple[int, int]] = ((1, 0),),
                  temperature: float = 296.0, strength: float = 1.0, lorentz_hwhm: float = 0.05,
                  resolution: float = 0.0, noise: float = 0.0, baseline=None, seed: int | None = None,
                  y_kind: str = "absorbance", herman_wallis: float = 0.0, J_max: int | None = None,
                  min_relative: float = 1e-4, q_branch: bool = False,
                  dipole: Sequence[float] | None = None, window: float = 50.0,
                  title: str | None = None) -> Spectrum:
    """Simulated rovibrational absorption spectrum of a diatomic.

    Parameters
    ----------
    molecule, constants, bands, temperature, J_max, min_relative, herman_wallis, q_branch, dipole
        As for :func:`widgetkit.simulate.line_list` (constants of the main isotopologue).
    x : array_like, optional
        The wavenumber grid (cm⁻¹, ascending). Otherwise ``x_range`` and ``step``.
    x_range : (low, high), optional
        cm⁻¹; default the span of the lines plus 5 cm⁻¹ and 20 line widths.
    step : float, optional
        cm⁻¹; default a fifth of the narrowest Voigt FWHM.
    strength : float
        Peak absorbance of the tallest single line (default 1).
    lorentz_hwhm : float
        Lorentzian HWHM γ in cm⁻¹ (default 0.05); 0 gives pure Gaussian lines.
    resolution : float
        Instrument FWHM in cm⁻¹ (Gaussian), added in quadrature to the Doppler width.
    noise : float
        Standard deviation of Gaussian noise in y units (default 0).
    baseline : float or sequence, optional
        Absorbance baseline: a constant or coefficients (c0, c1, ...) of a
        polynomial in t = (x − centre)/half-range, t ∈ [−1, 1].
    seed : int, optional
        Seed of the noise; when noise > 0 and no seed is given one is drawn
        and recorded in ``meta``.
    y_kind : {"absorbance", "transmittance"}
        Transmittance is 10^(−A) (fraction).
    window : float
        Exact Voigt within ±window Voigt FWHMs of each line (default 50).
    title : str, optional
        ``meta["title"]``.

    Returns
    -------
    Spectrum with ``meta = {"title": ..., "simulated": {"function", "params"
    (every argument, JSON-able; molecule as its ``to_dict()``),
    "widgetkit_version", "n_lines"}}``.
    """
    params = dict(molecule=molecule, constants=dict(constants) if isinstance(constants, Mapping)
                  else constants, x=x, x_range=x_range, step=step, bands=bands,
                  temperature=temperature, strength=strength, lorentz_hwhm=lorentz_hwhm,
                  resolution=resolution, noise=noise, baseline=baseline, seed=seed, y_kind=y_kind,
                  herman_wallis=herman_wallis, J_max=J_max, min_relative=min_relative,
                  q_branch=q_branch, dipole=dipole, window=window)
    return _simulate("rovibrational", params, title=title)


def vibrational(molecule: Diatomic, constants: Mapping[str, float], *,
                bands: Sequence[tuple[int, int]] = ((1, 0), (2, 0), (3, 0)),
                dipole: Sequence[float] = (0.0, 1.0), temperature: float = 296.0,
                rotational: bool = True, x=None, x_range=None, step: float | None = None,
                strength: float = 1.0, lorentz_hwhm: float = 0.05, resolution: float = 0.5,
                noise: float = 0.0, baseline=None, seed: int | None = None,
                y_kind: str = "absorbance", herman_wallis: float = 0.0, J_max: int | None = None,
                min_relative: float = 1e-7, window: float = 50.0,
                title: str | None = None) -> Spectrum:
    """Overview of a fundamental and its overtones (and hot bands), with band
    strengths from the numerical oscillator.

    Band factors |M_v′v″|² come from :func:`widgetkit.oscillator.solve` on the
    Morse potential of ω_e and ω_e x_e with the dipole function ``dipole``
    ((c_0, c_1, ...) in D/Å^k, default linear: overtones from mechanical
    anharmonicity only); line positions from the full term formula. With
    ``rotational=False`` each band is one line at its intensity-weighted mean
    position carrying the band's total intensity. Other parameters as for
    :func:`rovibrational` (defaults: instrument resolution 0.5 cm⁻¹,
    ``min_relative`` 1e-7 so that weak overtones survive).
    """
    params = dict(molecule=molecule, constants=dict(constants) if isinstance(constants, Mapping)
                  else constants, x=x, x_range=x_range, step=step, bands=bands,
                  temperature=temperature, strength=strength, lorentz_hwhm=lorentz_hwhm,
                  resolution=resolution, noise=noise, baseline=baseline, seed=seed, y_kind=y_kind,
                  herman_wallis=herman_wallis, J_max=J_max, min_relative=min_relative,
                  dipole=dipole, window=window, rotational=rotational)
    return _simulate("vibrational", params, title=title, rotational=rotational)
