"""Fitted-line tables for the linear-molecule and Raman assignment tests, made by the
simulator from level constants (handbook values, from memory: widgetkit.simulate.LINEAR_HANDBOOK
and HANDBOOK). Lines closer than ``merge`` (cm⁻¹, default 3σ) are one observed line, as in a spectrum;
positions get seeded Gaussian noise of a known σ and areas a relative noise. Nothing here is a
check value by itself: the tests compare what the assignment recovers with what went in."""

from __future__ import annotations

import numpy as np
import pandas as pd


def observed(lines: pd.DataFrame, *, sigma: float = 0.002, area_noise: float = 0.02,
             min_intensity: float = 0.005, merge: float | None = None, seed: int = 1):
    """(table like Session.lines, truth) from a simulator line list; truth has ``label, band,
    side`` of the strongest line behind each observed one."""
    rng = np.random.default_rng(seed)
    merge = 3 * sigma if merge is None else merge  # closer lines are one line in a spectrum
    L = lines[lines["intensity"] >= min_intensity].sort_values("position").reset_index(drop=True)
    group = np.concatenate([[0], np.cumsum(np.diff(L["position"].to_numpy()) > merge)])
    rows = []
    for _, g in L.groupby(group):
        top = g.loc[g["intensity"].idxmax()]
        w = g["intensity"].to_numpy()
        side = top["side"] if "side" in g else "Stokes"
        rows.append({"true": float(np.sum(w * g["position"]) / w.sum()), "area": float(w.sum()),
                     "label": str(top["label"]).replace(" ", ""), "band": top["band"],
                     "side": side, "n": len(g)})
    t = pd.DataFrame(rows)
    t["position"] = t["true"] + rng.normal(0.0, sigma, len(t))
    t["position_err"] = sigma
    t["area"] = t["area"] * (1 + rng.normal(0.0, area_noise, len(t)))
    t["area_err"] = area_noise * t["area"]
    t["fwhm"] = 0.01
    t = t.iloc[rng.permutation(len(t))].reset_index(drop=True)
    t.insert(0, "line_id", np.arange(1, len(t) + 1))
    cols = ["line_id", "position", "position_err", "area", "area_err", "fwhm"]
    return t[cols], t[["line_id", "label", "band", "side", "n", "true"]]


def label_agreement(result, truth: pd.DataFrame, band_names: dict) -> dict:
    """Per simulated band: the fraction of its observed lines given the right label and band
    (composite e/f lines of one J count as right when the label agrees up to the e/f suffix)."""
    a = result.assignments.merge(truth, on="line_id", suffixes=("", "_true"))
    got = a["label"].fillna("").str.replace("ef", "", regex=False)
    want = a["label_true"].where(a["n"] == 1, a["label_true"].str.rstrip("ef"))
    right = (got == want) & (a["band"] == a["band_true"].map(band_names))
    return {b: float(right[a["band_true"] == b].mean()) for b in band_names}
