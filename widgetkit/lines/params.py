"""lmfit Parameters of a line fit, and the map from them to the model.

Parameter names (users inspect and edit them through ``constraints``):

* per line ``l<id>_area``, ``l<id>_position`` and the shape's widths
  ``l<id>_sigma`` / ``l<id>_gamma``;
* shared widths ``shared_sigma`` / ``shared_gamma`` (``shared_width=True``)
  or ``<group>_sigma`` / ``<group>_gamma`` for named groups;
* the baseline's internal coefficients (:mod:`.baselines`).

``constraints`` maps a parameter name to

* a string: an expression tying it to others (:mod:`.expressions` grammar),
* a number: the parameter is fixed at that value,
* a dict with any of ``value``, ``min``, ``max``, ``vary``, ``expr``;

and the special key ``"doppler"`` to ``{"temperature": K, "mass": u}`` (and
optionally ``"lines": [ids]``), which fixes each Gaussian width to its
Doppler width, ``l<id>_sigma = l<id>_position * sqrt(kT/(m c²))``.

:class:`ThetaMap` turns the variable values into the full model vector θ
(ordered areas, positions, widths by kind, then baseline) and gives the exact
``dθ/dv`` for the chain rule of the Jacobian.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence

import lmfit
import numpy as np
import scipy.sparse as sp

from ..errors import FitError
from .baselines import Baseline
from .expressions import check_expression, compile_expression
from .shapes import Shape, doppler_sigma

__all__ = ["build_params", "ThetaMap", "theta_names", "line_prefix"]

_IDENT = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


def line_prefix(line_id) -> str:
    """``l<id>_``; ids must be integers or identifier-like strings."""
    s = str(line_id)
    if not re.fullmatch(r"[A-Za-z0-9_]+", s):
        raise FitError(f"line id {line_id!r} cannot name parameters (parameter 'line_ids'); "
                       "use integers or letters, digits and underscores")
    return f"l{s}_"


def theta_names(shape: Shape, line_ids: Sequence, baseline: Baseline) -> list[str]:
    """Full parameter names in model order: by kind (area, position, widths), then baseline."""
    names = [line_prefix(i) + kind for kind in shape.param_names for i in line_ids]
    return names + list(baseline.params)


def _groups(shared_width, line_ids: Sequence, shape: Shape) -> dict[str, tuple[list, tuple]]:
    """group name -> (line ids, widths shared)."""
    if shared_width is False or shared_width is None:
        return {}
    if shared_width is True:
        return {"shared": (list(line_ids), shape.widths)}
    if isinstance(shared_width, str):
        if shared_width not in shape.widths:
            raise FitError(f"shared_width={shared_width!r} is not a width of shape "
                           f"{shape.name!r}; use True, False, one of {shape.widths} or a "
                           "mapping group -> line ids")
        return {"shared": (list(line_ids), (shared_width,))}
    if isinstance(shared_width, Mapping):
        out, seen = {}, set()
        for g, ids in shared_width.items():
            taken = {line_prefix(i)[:-1] for i in line_ids} | {"bl"}
            if not isinstance(g, str) or not _IDENT.match(g) or g in taken:
                raise FitError(f"shared_width group name {g!r} must be an identifier other "
                               "than 'bl' and 'l<line id>' (for example 'hot' or 'iso37')")
            ids = list(ids)
            unknown = [i for i in ids if i not in line_ids]
            if unknown:
                raise FitError(f"shared_width group {g!r} names unknown line ids {unknown}; "
                               f"known ids: {list(line_ids)}")
            twice = seen.intersection(ids)
            if twice:
                raise FitError(f"line ids {sorted(twice, key=str)} are in two shared_width "
                               "groups; put each line in one group")
            seen.update(ids)
            out[g] = (ids, shape.widths)
        return out
    raise FitError(f"shared_width must be True, False, a width name or a mapping group -> "
                   f"line ids, got {shared_width!r}")


def build_params(shape: Shape, baseline: Baseline, line_ids: Sequence, starts_theta: np.ndarray,
                 bounds: Mapping[str, tuple[float, float]], shared_width=False,
                 constraints: Mapping | None = None) -> lmfit.Parameters:
    """lmfit Parameters for the fit, constraints applied and checked.

    ``starts_theta`` holds starting values in :func:`theta_names` order;
    ``bounds`` maps names to (min, max).
    """
    names = theta_names(shape, line_ids, baseline)
    params = lmfit.Parameters()
    for name, val in zip(names, starts_theta):
        lo, hi = bounds.get(name, (-np.inf, np.inf))
        params.add(name, value=float(np.clip(val, lo, hi)), min=lo, max=hi)
    for g, (ids, widths) in _groups(shared_width, line_ids, shape).items():
        for w in widths:
            members = [line_prefix(i) + w for i in ids]
            vals = [params[m].value for m in members]
            spans = [bounds.get(m, (-np.inf, np.inf)) for m in members]
            lo, hi = min(b[0] for b in spans), max(b[1] for b in spans)  # any member's range
            params.add(f"{g}_{w}", value=float(np.median(vals)), min=lo, max=hi)
            for mname in members:
                params[mname].set(expr=f"{g}_{w}", min=-np.inf, max=np.inf)
    constraints = dict(constraints or {})
    doppler = constraints.pop("doppler", None)
    if doppler is not None:
        _apply_doppler(params, doppler, shape, line_ids)
    for pname, spec in constraints.items():
        if pname not in params:
            raise FitError(f"constraint names unknown parameter {pname!r}; known parameters: "
                           f"{', '.join(params)}")
        if isinstance(spec, str):
            spec = {"expr": spec}
        elif isinstance(spec, (int, float)) and not isinstance(spec, bool):
            spec = {"value": float(spec), "vary": False}
        elif not isinstance(spec, Mapping):
            raise FitError(f"constraint for {pname!r} must be an expression string, a number "
                           f"or a dict of value/min/max/vary/expr, got {spec!r}")
        extra = set(spec) - {"value", "min", "max", "vary", "expr"}
        if extra:
            raise FitError(f"constraint for {pname!r} has unknown keys {sorted(extra)}; use "
                           "value, min, max, vary, expr")
        par = params[pname]
        kw = {k: spec[k] for k in ("value", "min", "max", "vary") if k in spec}
        for k in ("min", "max"):
            if k in kw and kw[k] is None:
                kw[k] = -np.inf if k == "min" else np.inf
        if spec.get("expr"):
            if "min" in kw or "max" in kw:
                raise FitError(f"constraint for {pname!r} gives both an expression and bounds; "
                               "bound the parameters the expression uses instead")
            check_expression(spec["expr"], pname, set(params) - {pname})
            par.set(expr=spec["expr"], min=-np.inf, max=np.inf)
        elif "expr" in spec:
            par.set(expr="")  # lmfit: an empty string removes a constraint
        par.set(**kw)
    _check_all(params)
    return params


def _apply_doppler(params, doppler, shape: Shape, line_ids):
    if "sigma" not in shape.widths:
        raise FitError(f"constraint 'doppler' needs a Gaussian width; shape {shape.name!r} "
                       "has none (use 'gaussian', 'voigt' or 'pseudo_voigt')")
    try:
        t, mass = float(doppler["temperature"]), float(doppler["mass"])
    except (KeyError, TypeError, ValueError):
        raise FitError("constraint 'doppler' must be {'temperature': K, 'mass': u}, got "
                       f"{doppler!r}") from None
    if not (t > 0 and mass > 0 and math.isfinite(t) and math.isfinite(mass)):
        raise FitError(f"constraint 'doppler' needs temperature > 0 K and mass > 0 u, got "
                       f"{t} K and {mass} u")
    ratio = float(doppler_sigma(1.0, t, mass))
    ids = doppler.get("lines", line_ids)
    for i in ids:
        if i not in line_ids:
            raise FitError(f"constraint 'doppler' names unknown line id {i!r}")
        p = line_prefix(i)
        params[p + "sigma"].set(expr=f"{p}position * {ratio!r}", min=-np.inf, max=np.inf)


def _check_all(params: lmfit.Parameters) -> None:
    known = set(params)
    for name, par in params.items():
        if par.expr is not None:
            check_expression(par.expr, name, known - {name})
    ThetaMap(params, list(params))  # raises on cycles


class ThetaMap:
    """Variable values -> model vector θ, and the exact Jacobian ``dθ/dv``.

    Parameters
    ----------
    params : lmfit.Parameters
        Checked parameters (values of fixed ones are taken from here).
    theta : list of str
        Model parameter names in model order.
    """

    def __init__(self, params: lmfit.Parameters, theta: list[str]):
        self.var_names = [n for n, p in params.items() if p.vary and p.expr is None]
        self.theta = theta
        vindex = {n: k for k, n in enumerate(self.var_names)}
        self._compiled = {n: compile_expression(p.expr) for n, p in params.items()
                          if p.expr is not None}
        self._fixed = {n: float(p.value) for n, p in params.items()
                       if p.expr is None and not p.vary}
        self._deps = {n: [d for d in _names(params[n].expr)] for n in self._compiled}
        self._order = _topological(self._deps)
        sel = [(k, vindex[n]) for k, n in enumerate(theta) if n in vindex]
        self.simple = (all(n in vindex or n in self._fixed for n in theta)
                       and len(sel) == len(self.var_names))
        self._sel_rows = np.array([k for k, _ in sel], dtype=int)
        self._sel_cols = np.array([j for _, j in sel], dtype=int)
        self._theta_fixed = np.array([self._fixed.get(n, 0.0) for n in theta])
        #: variables are exactly θ, in order (no fixed or tied model parameter)
        self.identity = bool(self.simple and len(sel) == len(theta)
                             and all(k == j for k, j in sel))
        self.vindex = vindex

    def _env(self, v: np.ndarray) -> dict:
        env = {n: (float(v[k]), {n: 1.0}) for n, k in self.vindex.items()}
        env.update({n: (val, {}) for n, val in self._fixed.items()})
        for n in self._order:
            env[n] = self._compiled[n](env)
        return env

    def values(self, v: np.ndarray) -> np.ndarray:
        """θ for variable values ``v``."""
        if self.simple:
            th = self._theta_fixed.copy()
            th[self._sel_rows] = v[self._sel_cols]
            return th
        env = self._env(v)
        return np.array([env[n][0] for n in self.theta])

    def jacobian(self, v: np.ndarray) -> sp.csc_array:
        """``dθ/dv``, sparse, shape (len(theta), len(var_names))."""
        nt, nv = len(self.theta), len(self.var_names)
        if self.simple:
            return sp.csc_array((np.ones(self._sel_rows.size), (self._sel_rows,
                                 self._sel_cols)), shape=(nt, nv))
        env = self._env(v)
        rows, cols, data = [], [], []
        for k, n in enumerate(self.theta):
            for dname, d in env[n][1].items():
                if d != 0.0:
                    rows.append(k)
                    cols.append(self.vindex[dname])
                    data.append(d)
        return sp.csc_array((data, (rows, cols)), shape=(nt, nv))

    def all_values_and_jacobian(self, v: np.ndarray) -> tuple[dict, sp.csr_array]:
        """Every parameter's value and ``d/dv`` (for derived uncertainties)."""
        env = self._env(v)
        names = list(env)
        rows, cols, data = [], [], []
        for k, n in enumerate(names):
            for dname, d in env[n][1].items():
                if d != 0.0:
                    rows.append(k)
                    cols.append(self.vindex[dname])
                    data.append(d)
        jac = sp.csr_array((data, (rows, cols)), shape=(len(names), len(self.var_names)))
        return {n: (env[n][0], k) for k, n in enumerate(names)}, jac


def _names(expr: str) -> list[str]:
    from .expressions import expression_names

    return sorted(expression_names(expr))


def _topological(deps: Mapping[str, list[str]]) -> list[str]:
    order, state = [], {}

    def visit(n, chain):
        if state.get(n) == 2:
            return
        if state.get(n) == 1:
            raise FitError(f"constraint expressions form a cycle: {' -> '.join(chain + [n])}; "
                           "break it by letting one of these parameters vary freely")
        state[n] = 1
        for d in deps.get(n, []):
            if d in deps:
                visit(d, chain + [n])
        state[n] = 2
        order.append(n)

    for n in deps:
        visit(n, [])
    return order
