"""Checking the options of :func:`widgetkit.bandmodel.fit` (private).

Every refusal is a :class:`~widgetkit.errors.FitError` that names the argument, the
value and what to give instead.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from ..errors import FitError
from ..levels.molecule import Diatomic
from .instrument import check_instrument

__all__ = ["check_data", "check_molecule", "check_bands", "check_isotopologues", "BASELINES",
           "check_choice", "check_number", "check_mapping"]

#: baseline name -> polynomial degree (None: no baseline)
BASELINES = {None: None, "none": None, "constant": 0, "linear": 1, "poly2": 2, "poly3": 3}


def check_data(x, y, y_kind: str) -> tuple[np.ndarray, np.ndarray, str]:
    """1-d finite arrays of equal length, x ascending (sorted if descending)."""
    try:
        xa = np.asarray(x, dtype=float)
        ya = np.asarray(y, dtype=float)
    except (TypeError, ValueError):
        raise FitError("x and y must be arrays of numbers (wavenumbers in cm-1 and the spectrum)") \
            from None
    if xa.ndim != 1 or ya.ndim != 1 or xa.size != ya.size:
        raise FitError(f"x and y must be 1-d and of equal length, got shapes {xa.shape} and {ya.shape}")
    if xa.size < 20:
        raise FitError(f"the band model needs at least 20 points, got {xa.size}")
    bad = ~(np.isfinite(xa) & np.isfinite(ya))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise FitError(f"x and y must be finite; point {i} is x={xa[i]!r}, y={ya[i]!r} "
                       f"({int(bad.sum())} such points); remove or interpolate them first")
    if xa[0] > xa[-1]:
        xa, ya = xa[::-1].copy(), ya[::-1].copy()
    if np.any(np.diff(xa) <= 0):
        raise FitError("x must be strictly monotonic (no repeated wavenumbers)")
    kind = str(y_kind)
    if kind not in ("absorbance", "transmittance"):
        raise FitError(f"y_kind must be 'absorbance' or 'transmittance' for a band model, got "
                       f"{y_kind!r} (emission and Raman spectra are not absorption bands)")
    if kind == "transmittance" and (np.nanmax(ya) > 5.0):
        raise FitError("transmittance must be a fraction (0..1); divide percent values by 100")
    return xa, ya, kind


def check_molecule(molecule) -> Diatomic:
    if isinstance(molecule, Diatomic):
        return molecule
    if getattr(molecule, "kind", None) == "linear" or type(molecule).__name__ == "Linear":
        atoms = tuple(getattr(molecule, "atoms", ()))
        if len(atoms) == 2:
            return Diatomic(*atoms, min_abundance=getattr(molecule, "min_abundance", 0.01))
        return molecule  # a parallel band (see .linear)
    if isinstance(molecule, str):
        return Diatomic.parse(molecule)
    if isinstance(molecule, Mapping) and "atoms" in molecule:
        if molecule.get("kind") == "linear" and len(molecule["atoms"]) != 2:
            from ..levels.linear import Linear

            return Linear.from_dict(molecule)
        return Diatomic.from_dict({k: v for k, v in molecule.items() if k != "kind"})
    raise FitError(f"molecule must be a widgetkit Diatomic or a formula such as 'CO', got "
                   f"{type(molecule).__name__}; other molecule kinds plug in through their line "
                   "system (see widgetkit.bandmodel)")


def check_bands(band) -> tuple[tuple[int, int], ...]:
    try:
        if len(band) == 2 and all(isinstance(v, (int, np.integer)) for v in band):
            bands = ((int(band[0]), int(band[1])),)
        else:
            bands = tuple((int(a), int(b)) for a, b in band)
    except (TypeError, ValueError):
        raise FitError(f"band must be (v_upper, v_lower) such as (1, 0), or a list of them; "
                       f"got {band!r}") from None
    for a, b in bands:
        if not a > b >= 0:
            raise FitError(f"band ({a}, {b}) is not an absorption band: need v_upper > v_lower >= 0")
    return bands


def check_isotopologues(molecule: Diatomic, isotopologues) -> tuple[tuple, tuple, bool]:
    """(names, abundance ratios to the first, ratios free?) from the ``isotopologues`` option."""
    isos = molecule.isotopologues
    natural = {i.name: i.abundance for i in isos}
    free = False
    if isinstance(isotopologues, str):
        if isotopologues == "natural":
            names = [i.name for i in isos]
        elif isotopologues == "free":
            names, free = [i.name for i in isos], True
        elif isotopologues == "main":
            names = [isos[0].name]
        else:
            raise FitError(f"isotopologues must be 'natural', 'free', 'main', a list of names or "
                           f"a dict of names to abundances, got {isotopologues!r}")
        ab = [natural[n] for n in names]
    elif isinstance(isotopologues, Mapping):
        names = list(isotopologues)
        ab = [float(isotopologues[n]) for n in names]
    else:
        try:
            names = [str(n) for n in isotopologues]
        except TypeError:
            raise FitError(f"isotopologues must be 'natural', 'free', 'main', a list or a dict, "
                           f"got {isotopologues!r}") from None
        ab = None
    for n in names:
        if n not in natural:
            raise FitError(f"isotopologues: {n!r} is not an isotopologue of {molecule}; known: "
                           + ", ".join(natural))
    if ab is None:
        ab = [natural[n] for n in names]
    if not names or not all(a > 0 for a in ab):
        raise FitError("isotopologues: give at least one isotopologue with a positive abundance")
    return tuple(names), tuple(a / ab[0] for a in ab), free


def check_choice(name: str, value, choices) -> str:
    if value not in choices:
        raise FitError(f"{name} must be one of {', '.join(map(repr, choices))}, got {value!r}")
    return value


def check_number(name: str, value, *, positive: bool = False, allow_none: bool = True):
    if value is None and allow_none:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise FitError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(v) or (positive and not v > 0) or v < 0:
        raise FitError(f"{name} must be a finite number {'> 0' if positive else '>= 0'}, got {value!r}")
    return v


def check_mapping(name: str, value, known: list[str] | None) -> dict:
    """Check a dict of parameter names to values (names against ``known`` unless None)."""
    if value is None:
        return {}
    if isinstance(value, (list, tuple, set)) and name == "free":
        value = dict.fromkeys(value)
    if not isinstance(value, Mapping):
        raise FitError(f"{name} must be a dict of parameter names to values, got {value!r}")
    out = {}
    for k, v in value.items():
        if known is not None and k not in known:
            raise FitError(f"{name}: unknown parameter {k!r}; this model has "
                           + ", ".join(known))
        if name != "free":
            where = f"{name}[{k!r}]"
            if k.startswith(("temperature", "B_", "gauss")):
                v = check_number(where, v, positive=True, allow_none=False)
            elif k.startswith(("band_area", "lorentz", "resolution", "abundance")):
                v = check_number(where, v, allow_none=False)
            else:
                v = _finite(where, v)
        out[k] = v
    return out


def _finite(name, v) -> float:
    try:
        f = float(v)
    except (TypeError, ValueError):
        raise FitError(f"{name} must be a number, got {v!r}") from None
    if not math.isfinite(f):
        raise FitError(f"{name} must be finite, got {v!r}")
    return f


def instrument_name(value) -> str:
    return check_instrument(value)
