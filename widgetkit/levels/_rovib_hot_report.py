"""Result rows of the hot bands found beside a rovibrational band (private; see
:mod:`._rovib_hot`): their lines in the assignment table (v_upper, v_lower of the hot
band), their constants and combination differences with a ``band`` column, their
covariance under the key "<isotopologue> <band>" (e.g. "12C-16O 2-1")."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._rovib_core import Lines
from ._rovib_hot import HotBand
from .bandfit import combination_differences, equilibrium_constants, rotational_temperature
from .candidates import band_label, format_label
from .terms import rot_term

__all__ = ["add_hot_bands", "covariance_key"]


def covariance_key(iso: str, band) -> str:
    """Key of a hot band's covariance in :attr:`BandAssignment.covariance`."""
    return f"{iso} {band_label(*band)}"


def add_hot_bands(data: Lines, hot: list[HotBand], table: pd.DataFrame, consts: list,
                  covs: dict, cd_rows: list, msgs: list, reasons: list, opts: dict) -> np.ndarray:
    """Fill the hot-band lines into ``table`` and append their constants, combination
    differences, covariance and messages; returns the mask of their well-fitted lines."""
    good_all = np.zeros(data.n, dtype=bool)
    for hb in hot:
        _table_rows(data, hb, table)
        good_all[hb.idx[hb.good]] = True
        _band_rows(data, hb, consts, covs, cd_rows, reasons, opts)
        msgs += hb.messages
        reasons += hb.reasons
    return good_all


def _band_rows(data: Lines, hb: HotBand, consts: list, covs: dict, cd_rows: list, reasons: list,
               opts: dict) -> None:
    """Constants, covariance and combination differences of one hot band."""
    sig = data.sigma
    good = hb.idx[hb.good]
    label = hb.label
    bf = hb.model.fit
    iso = opts["molecule"].isotopologue(hb.iso)

    def add(nm, v, e, u="cm-1"):
        consts.append({"isotopologue": hb.iso, "name": nm, "value": float(v), "stderr": float(e),
                       "unit": u, "band": label})

    for k in ("band_origin", "B_upper", "B_lower", "D_upper", "D_lower"):
        if k.startswith("D") and bf.centrifugal == "none":
            continue
        add(k, bf.values[k], bf.stderr_of(k))
    covs[covariance_key(hb.iso, hb.band)] = pd.DataFrame(bf.fit.cov, index=list(bf.names),
                                                         columns=list(bf.names))
    for nm, v, e, u in equilibrium_constants(bf, hb.band[0], hb.band[1], iso.reduced_mass):
        add(nm, v, e, u)
    g = hb.good
    rows, cdc = combination_differences(hb.Ju[g], hb.Jl[g], data.x[good],
                                        None if sig is None else sig[good], bf)
    cd_rows += [dict(r, isotopologue=hb.iso, band=label) for r in rows]
    for nm, v, e, u in cdc:
        add(nm, v, e, u)
    r = data.x[good] - hb.calc[g]
    add("n_lines", int(g.sum()), np.nan, "1")
    add("rms", float(np.sqrt(np.mean(r**2))), np.nan)
    E = rot_term(hb.Jl[g], bf.values["B_lower"], bf.values["D_lower"])
    t = rotational_temperature(data.x[good], data.area[good],
                               None if data.area_err is None else data.area_err[good],
                               hb.Ju[g], hb.Jl[g], E, temperature_guess=opts["temperature"] or 300.0,
                               outlier_sigma=opts["outlier_sigma"])
    if t is not None:
        add("T_rot", t[0], t[1], "K")
    if sig is not None and bf.fit.dof > 0 and np.sqrt(bf.fit.reduced_chi2) > 3.0:
        reasons.append(f"{hb.iso} {label}: the lines scatter {np.sqrt(bf.fit.reduced_chi2):.1f} "
                       "times their stated position errors about the hot-band fit (more than 3): "
                       "some labels may be wrong, or the errors too small")


def _table_rows(data: Lines, hb: HotBand, table: pd.DataFrame) -> None:
    idx = hb.idx
    sig = data.sigma
    s = (sig[idx] if sig is not None else np.ones(len(idx))) * hb.model.scatter
    table.loc[idx, "isotopologue"] = hb.iso
    table.loc[idx, "v_upper"] = hb.band[0]
    table.loc[idx, "v_lower"] = hb.band[1]
    table.loc[idx, "J_upper"] = hb.Ju
    table.loc[idx, "J_lower"] = hb.Jl
    table.loc[idx, "label"] = [format_label(u, v) for u, v in zip(hb.Ju, hb.Jl, strict=True)]
    table.loc[idx, "m"] = np.where(hb.Ju > hb.Jl, hb.Jl + 1, -hb.Jl)
    table.loc[idx, "calc"] = hb.calc
    table.loc[idx, "calc_err"] = hb.calc_err
    table.loc[idx, "obs_minus_calc"] = data.x[idx] - hb.calc
    table.loc[idx, "normalised_residual"] = (data.x[idx] - hb.calc) / s
    table.loc[idx, "outlier"] = hb.outlier
    table.loc[idx, "blended"] = hb.blended
    table.loc[idx, "blend_with"] = hb.blend_with
    w = np.where(hb.good, 1.0 / sig[idx] ** 2 if sig is not None else 1.0, 0.0)
    table.loc[idx, "weight"] = w
