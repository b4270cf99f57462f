"""Lines whose fitted area may hold an unresolved line of another sub-band (private).

A weak line of another isotopologue (¹³CO among ¹²CO, at about 1 %) that lies within a few
line widths of a strong line is often not found as a peak of its own. The line fit then
gives its area, in part or whole, to the strong neighbour (measured on simulated CO at
0.2 cm⁻¹: a ¹³CO line two widths from ¹²CO R(1) added six standard errors to its area).
With precise areas a handful of such lines tilt the Boltzmann plot: T_rot came out
2–6 standard errors low. Their positions are hardly moved, so only the intensity
analyses (T_rot, abundance ratios) leave them out.

Every natural isotopologue of the molecule is predicted (its own sub-band fit when there is
one, else the main sub-band's constants scaled by reduced mass); a prediction not matched to
an observed line of its own and within :data:`REACH` line widths (FWHM) of an observed line
hides in it. Its area is predicted from the main sub-band's areas (least-squares scale of
the Boltzmann and Hönl–London intensities at the temperature used), times the abundance
ratio; when it exceeds :data:`AREA_SIGMA` standard errors of the observed area (or
:data:`AREA_FRACTION` of it when the areas have no errors), the line is marked.
"""

from __future__ import annotations

import numpy as np

from ._rovib_core import Lines, State
from ._seed import scaled_band_constants
from .candidates import C2, format_label, honl_london, rotational_partition
from .terms import rot_term

__all__ = ["hidden_neighbours", "REACH", "AREA_SIGMA", "AREA_FRACTION"]

#: how close (in FWHM of the observed line) an unfound line must be to merge into it
REACH = 3.0
#: a hidden area above this many standard errors of the observed area marks the line
AREA_SIGMA = 0.5
#: without area errors: a hidden area above this fraction of the observed area marks it
AREA_FRACTION = 0.01


def _intensity(nu, Ju, Jl, B, D, T) -> np.ndarray:
    """Relative absorption line intensity: ν L(J) exp(−c₂E″/T)(1 − exp(−c₂ν/T)) / Q."""
    E = rot_term(Jl, B, D)
    return (np.abs(nu) * honl_london(Ju, Jl) * np.exp(-C2 * E / T) * -np.expm1(-C2 * np.abs(nu) / T)
            / rotational_partition(B, D, T))


def _predicted(values: dict, jmax: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(J′, J″, position) of the P and R lines up to J″ = jmax."""
    J = np.arange(0, jmax + 1)
    Ju = np.concatenate([J + 1, J[1:] - 1])
    Jl = np.concatenate([J, J[1:]])
    nu = (values["band_origin"] + rot_term(Ju, values["B_upper"], values["D_upper"])
          - rot_term(Jl, values["B_lower"], values["D_lower"]))
    return Ju, Jl, nu


def hidden_neighbours(data: Lines, st: State, good: np.ndarray, molecule, band, order: list[str],
                      temperature: float, fwhm: float | None = None) -> dict[int, str]:
    """Line index -> what may hide in it (the module notes), for the ``good`` lines.

    ``fwhm``: the line width to use where ``data.fwhm`` does not give one (e.g. the
    resolution); without either no line is marked.
    """
    if not order or not np.any(good) or not temperature > 0:
        return {}
    main = order[0]
    mdl0 = st.models.get(main)
    if mdl0 is None or not mdl0.values.get("B_lower", 0) > 0:
        return {}
    ab = {i.name: i.abundance for i in molecule.isotopologues}
    mu = {i.name: i.reduced_mass for i in molecule.isotopologues}
    if main not in ab:
        return {}
    # the scale of the main sub-band's areas against their relative intensities
    sel = np.nonzero(good & (st.iso == main) & np.isfinite(data.area) & (data.area > 0))[0]
    if len(sel) < 3:
        return {}
    v0 = mdl0.values
    S0 = _intensity(data.x[sel], st.Ju[sel], st.Jl[sel], v0["B_lower"], v0["D_lower"], temperature)
    k = float(np.sum(data.area[sel] * S0) / np.sum(S0 * S0))
    jmax = int(max(np.max(st.Jl[good]), 1) + 10)
    observed = {(st.iso[i], int(st.Ju[i]), int(st.Jl[i])) for i in np.nonzero(st.iso != None)[0]}  # noqa: E711
    width = data.fwhm if data.fwhm is not None else np.full(data.n, np.nan)
    width = np.where(np.isfinite(width) & (width > 0), width, fwhm if fwhm else np.nan)
    out: dict[int, list[str]] = {}
    idx = np.nonzero(good)[0]
    for name in ab:
        if name in st.models and st.models[name].values.get("B_lower", 0) > 0:
            vals = st.models[name].values
        else:
            vals, _ = scaled_band_constants(v0, band[0], band[1], float(np.sqrt(mu[main] / mu[name])))
        Ju, Jl, nu = _predicted(vals, jmax)
        area = k * (ab[name] / ab[main]) * _intensity(nu, Ju, Jl, vals["B_lower"], vals["D_lower"],
                                                      temperature)
        for p in range(len(nu)):
            if (name, int(Ju[p]), int(Jl[p])) in observed:
                continue  # fitted as a line of its own
            d = np.abs(data.x[idx] - nu[p])
            near = idx[d <= REACH * width[idx]]
            for i in near:
                if st.iso[i] == name and st.Ju[i] == Ju[p] and st.Jl[i] == Jl[p]:
                    continue
                if data.area_err is not None and np.isfinite(data.area_err[i]) and data.area_err[i] > 0:
                    big = area[p] > AREA_SIGMA * data.area_err[i]
                else:
                    big = area[p] > AREA_FRACTION * data.area[i]
                if big:
                    out.setdefault(int(i), []).append(f"{format_label(Ju[p], Jl[p])} of {name}")
    return {i: "; ".join(v) for i, v in out.items()}
