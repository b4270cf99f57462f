"""Rebuilding a band-model fit from a session's record without fitting
(:func:`restore_fit`; split from :mod:`.fitting`, no change of behaviour)."""

from __future__ import annotations

import time
from collections.abc import Mapping

import numpy as np
import pandas as pd

from ..errors import FitError
from ..spectrum import Spectrum
from .build import build_model
from .fitting import _options
from .result import PARAMETER_COLUMNS, BandFit, mark_not_fitted

__all__ = ["restore_fit"]


def restore_fit(spectrum: Spectrum, molecule, options: Mapping, recorded: Mapping) -> BandFit:
    """Rebuild a :class:`BandFit` from a recorded result without fitting (one evaluation).

    ``options`` are the keyword arguments the fit was run with (as a session records
    them), ``recorded`` the step's recorded result: the parameter table (name, value,
    stderr, status, unit), the constants, the correlation matrix, the domain, the status
    and its reasons, and the messages. The model curve is recomputed at the recorded
    values; nothing is estimated or fitted.
    """
    if not isinstance(spectrum, Spectrum):
        raise FitError(f"restore_fit needs a widgetkit Spectrum, got {type(spectrum).__name__}")
    t0 = time.perf_counter()
    opts = {"y_kind": spectrum.y_kind, "meta": spectrum.meta, **dict(options)}
    for k in ("max_nfev", "max_time", "progress", "widen_errors", "check_contour",
              "second_look"):
        # the record holds their effect
        opts.pop(k, None)
    keys = ("band", "temperature", "resolution", "instrument", "isotopologues", "fix", "baseline",
            "y_kind", "joint", "centrifugal", "shape", "lorentz_hwhm", "convolve", "start", "free",
            "meta", "kind")
    defaults = {"band": (1, 0), "temperature": None, "resolution": None, "instrument": "gaussian",
                "isotopologues": "natural", "fix": None, "baseline": "linear", "y_kind": None,
                "joint": True, "centrifugal": "shared", "shape": "doppler", "lorentz_hwhm": None,
                "convolve": "auto", "start": None, "free": None, "meta": None, "kind": None}
    unknown = set(opts) - set(keys)
    if unknown:
        raise FitError(f"restore_fit: unknown option(s) {', '.join(sorted(unknown))}")
    o = _options(spectrum.x, spectrum.y, molecule, **{k: opts.get(k, defaults[k]) for k in keys})
    ptab = pd.DataFrame(dict(recorded["parameters"]))
    theta = dict(zip(ptab["name"], ptab["value"].astype(float), strict=True))
    st = {**theta, "baseline": [v for n, v in theta.items() if n.startswith("baseline_")]}
    if "B_e" in theta:
        vu, vl = o["bands"][0]
        st.update(B_lower=theta["B_e"] - theta["alpha_e"] * (vl + 0.5),
                  B_upper=theta["B_e"] - theta["alpha_e"] * (vu + 0.5), D=theta["D_e"])
    elif "D" in theta:
        st["D"] = theta["D"]
    else:
        st["D"] = theta.get("D_lower", 0.0)
    st.setdefault("gauss_fwhm", 1.0)
    model_opts = o["model_options"](str(recorded.get("domain", "absorbance")))
    t_struct = float(recorded.get("structure_temperature") or 1.5 * max(theta["temperature"], 300))
    model, params = build_model(o["x"], o["mol"], model_opts, st, structure_temperature=t_struct)
    vec = np.array([theta[n] for n in model.names])
    comp = model.components(vec)
    names = list(recorded["correlation"]["names"])
    corr = np.array(recorded["correlation"]["matrix"], dtype=float).reshape(len(names), len(names))
    se = ptab.set_index("name")["stderr"].astype(float)
    sd = np.array([se.get(n, 0.0) for n in names])
    resid = o["y"] - comp["model"]
    dof = max(o["y"].size - len(names), 1)
    table = ptab.reindex(columns=PARAMETER_COLUMNS)
    table["source"] = "recorded"
    table["note"] = ""
    return BandFit(
        parameters=table,
        constants=mark_not_fitted(pd.DataFrame(dict(recorded["constants"])), table),
        correlation=pd.DataFrame(corr, index=names, columns=names),
        covariance=pd.DataFrame(corr * np.outer(sd, sd), index=names, columns=names),
        x=o["x"], y=o["y"], model_y=comp["model"], baseline_y=comp["baseline"], residual=resid,
        y_kind=o["y_kind"], status=str(recorded["status"]), reasons=list(recorded["reasons"]),
        messages=list(recorded.get("messages", [])) + ["restored from the record (not refitted)"],
        converged=bool(recorded["converged"]), message="restored", nfev=1, njev=0,
        elapsed=time.perf_counter() - t0, chisqr=float(resid @ resid),
        redchi=float(resid @ resid) / dof, error_scale=float(recorded.get("error_scale", 1.0)),
        error_factors={str(k): float(v) for k, v in dict(recorded.get("error_factors") or {}).items()},
        # a record from before the flag: its error scale above 1 meant the same
        structured_residual=bool(recorded.get("structured_residual",
                                              float(recorded.get("error_scale", 1.0)) > 1.0)),
        domain=model_opts.domain, lines=model.line_table(vec), quick=None,
        spec={**o["spec"], "structure_temperature": t_struct}, theta=theta)
