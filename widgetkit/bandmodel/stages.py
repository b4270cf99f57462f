"""The stages of a band-model fit on one model (private): :class:`Run` holds a model, its
parameters and a :class:`~.engine.Fitter`; the convolution domain is settled by
:func:`.domain.exact_for_transmittance` and :func:`.domain.note_approximation`.

Parameters the data cannot determine: after the full fit, a *secondary* parameter (centrifugal
constants, ω_e x_e, line widths, the resolution, abundance ratios, the minor isotopologues'
own constants) whose standard error exceeds its scale (:func:`relevance`) is held at its start
value and the fit repeated; the result lists it as "held" with the reason. Primary parameters
(band origin, B, T, band area) are never held: strong correlations among them make the result
"doubtful" with a hint which to fix.
"""

from __future__ import annotations

import math
import time

import numpy as np
import pandas as pd

from ..errors import FitError
from .build import build_model
from .checks import check_mapping
from .crosscheck import check_contour, contour_reason, widen_for_contour
from .engine import Fitter
from .params import PRIMARY
from .quick import PRSeparation
from .result import PARAMETER_COLUMNS, BandFit, derived_constants, mark_not_fitted
from .secondary import IMPLAUSIBLE_SHIFT, PLAUSIBILITY_NAMES, hold_undetermined, relevance
from .structure import widen

__all__ = ["Run", "relevance", "IMPLAUSIBLE_SHIFT", "PLAUSIBILITY_NAMES"]

# ---------------------------------------------------------------------- the run
class Run:
    """One model, its fitter, and the staged fit."""

    def __init__(self, x, y, mol, opts, st, sources, t_struct, user_start, fix, free, resolution,
                 lorentz, max_nfev, max_time, progress, t0, messages=None, theta=None):
        self.x, self.y, self.mol, self.opts, self.st = x, y, mol, opts, st
        self.sources, self.t_struct = sources, t_struct
        self.user_start, self.fix, self.free_opt = dict(user_start), dict(fix), list(free)
        self.resolution, self.lorentz = resolution, lorentz
        self.max_nfev, self.max_time, self.progress, self.t0 = max_nfev, max_time, progress, t0
        self.messages = list(messages or [])
        self.step = float(np.median(np.diff(x)))  # the median data step (cm⁻¹)
        self.model, self.params = build_model(x, mol, opts, st, structure_temperature=t_struct)
        self._configure()
        left = max(max_time - (time.perf_counter() - t0), 1.0)
        self.fitter = Fitter(self.model, self.params, y, max_nfev=max_nfev, max_time=left,
                             progress=progress)
        if theta is not None:
            for k, n in enumerate(self.model.names):
                if n in theta and self.params[k].vary:
                    self.fitter.theta[k] = theta[n]
        self.held: dict[str, str] = {}
        self.scanned_late = False

    def _configure(self) -> None:
        names = [p.name for p in self.params]
        # band constants are start hints of a joint model too (they set B_e, α_e and D_e)
        hints = ["B_lower", "B_upper", "D"] if self.opts.joint else []
        start = {k: v for k, v in check_mapping("start", self.user_start, names + hints).items()
                 if k in names}
        fix = check_mapping("fix", self.fix, names)
        free = check_mapping("free", self.free_opt, names)
        for p in self.params:
            if p.name in start:
                p.value, p.source = float(start[p.name]), "given"
            elif p.name in self.sources:
                p.source = self.sources[p.name]
            if p.name in free:
                p.vary = True
            if p.name in fix:
                p.value, p.vary, p.source = float(fix[p.name]), False, "fixed"
        for p in self.params:
            if p.name == "resolution" and self.resolution is not None and p.name not in free:
                p.vary, p.source = False, "given"
            if p.name == "lorentz_hwhm" and self.lorentz is not None and p.name not in free:
                p.vary, p.source = False, "given"
            if p.name == "resolution" and p.vary and p.source == "estimated":
                p.source = "estimated from the line widths" if "observed_fwhm" in self.st \
                    else "scanned"
            if p.name.startswith("baseline_"):
                p.source = "spectrum ends"
            if not (p.lower <= p.value <= p.upper):
                raise FitError(f"the start value of {p.name} ({p.value:g}) is outside its "
                               f"bounds [{p.lower:g}, {p.upper:g}]")
        if not any(p.vary for p in self.params):
            raise FitError("every parameter is fixed; nothing to fit")

    def rebuilt(self, t_struct: float) -> Run:
        theta = dict(zip(self.model.names, self.fitter.theta, strict=True))
        st = {**self.st, **{k: v for k, v in theta.items() if not k.startswith("baseline_")}}
        st["baseline"] = [theta[n] for n in self.model.base_names]
        if "B_e" in theta:  # joint: band constants of the main isotopologue for the set-up
            vu, vl = self.opts.bands[0]
            st["B_lower"] = theta["B_e"] - theta["alpha_e"] * (vl + 0.5)
            st["B_upper"] = theta["B_e"] - theta["alpha_e"] * (vu + 0.5)
            st["D"] = theta["D_e"]
        new = Run(self.x, self.y, self.mol, self.opts, st, self.sources, t_struct,
                   self.user_start, self.fix, self.free_opt, self.resolution, self.lorentz,
                   self.max_nfev, self.max_time, self.progress, self.t0, self.messages, theta)
        for p_new, p_old in zip(new.params, self.params, strict=True):
            p_new.vary, p_new.note, p_new.source = p_old.vary, p_old.note, p_old.source
            if not p_old.vary:
                p_new.value = p_old.value
        new.fitter.theta = np.array([theta[n] for n in new.model.names])
        new.held = dict(self.held)
        new.fitter.nfev, new.fitter.njev = self.fitter.nfev, self.fitter.njev
        return new

    # -------------------------------------------------------------- stages
    def stages(self, scan_first: bool = False) -> None:
        """The staged fit: linear parameters, the coarse-to-fine stages of resolved lines
        without indexed starts, the scan of a resolution not given (after the coarse stages,
        or before them with ``scan_first``), the final stage."""
        f = self.fitter
        linear = [p.name for p in self.params if p.vary and
                  (p.name == "band_area" or p.name.startswith("baseline_"))]
        if linear:
            f.run(linear, stage="linear", max_nfev=10)
        coarse = not self.st.get("indexed", True) and self.st.get("spacing")
        res = self.params[f.index("resolution")]
        scan = res.vary and res.source == "scanned"
        if scan and scan_first:
            self._scan_resolution(linear)
        if coarse:
            self._coarse_to_fine(float(self.st["spacing"]))
        if scan and not scan_first:
            self._scan_resolution(linear)
        #: a second look (:func:`.fitting.fit`) may scan the resolution first instead
        self.scanned_late = bool(scan and coarse and not scan_first)
        self.final_stage()

    def _scan_resolution(self, linear: list[str]) -> None:
        f = self.fitter
        res = self.params[f.index("resolution")]
        B, step = self.st["B_lower"], self.step
        cands = np.geomspace(max(2 * step, 0.02 * B), max(8 * B, 4 * step), 9)
        best = f.scan("resolution", cands, linear)
        if best == cands[0] and cands[0] > 3.0 * step:
            # the narrowest candidate won: on down to two data steps (measured: HCl at
            # 0.01 cm-1 every 0.0025 cm-1 had 0.21 as its narrowest candidate; the fit then
            # held the resolution at 0.15 and the Lorentzian width at 0, 30x the noise left
            # at the lines). Scans whose best was inside the range are as before.
            kept, chi = f.theta.copy(), f.chisqr()
            lower = f.scan("resolution", np.geomspace(2 * step, cands[0], 7)[:-1], linear)
            if f.chisqr() < chi:
                best = lower
            else:
                f.theta = kept
        res.value = best
        self.messages.append(f"resolution not given: scanned, best start {best:.3g} cm-1")

    def held_implausible(self) -> bool:
        """Whether a secondary constant was held as implausible (the model's misfit)."""
        return any(why.startswith("implausible") for why in self.held.values())

    def _coarse_to_fine(self, spacing: float) -> None:
        """Resolved lines without indexed start values: fit the contour smoothed (data and
        model alike) to a Gaussian FWHM of one line spacing, then of a third of it, so that
        the band constants come into the basin of the full fit."""
        from .quick import smooth
        from .render import uniform_step

        dx = uniform_step(self.x)
        if dx is None or self.opts.domain != "absorbance":
            return
        f = self.fitter
        names = [p.name for p in self.params if p.vary and not p.secondary or
                 (p.vary and p.name.startswith("baseline_"))]
        y0 = f.y
        k0 = f.index("band_origin")
        for fwhm in (spacing, spacing / 3.0):
            sigma = fwhm / 2.3548
            self.model.smoothing = sigma
            f.y = smooth(y0, sigma / dx)
            f.run(names, stage=f"coarse {fwhm:.3g} cm-1", max_nfev=25, tol=1e-2)
        # the J numbering: the band origin one line further either way
        best = (f.chisqr(), f.theta.copy())
        for shift in (-spacing, spacing):
            keep = f.theta.copy()
            f.theta[k0] += shift
            sol = f.run(names, stage="coarse, numbering", max_nfev=25, tol=1e-2)
            if sol.chisqr < best[0]:
                best = (sol.chisqr, f.theta.copy())
            f.theta = keep
        f.theta = best[1]
        self.model.smoothing = 0.0
        f.y = y0
        f._cache = None
        self.messages.append(f"coarse-to-fine: the contour smoothed to {spacing:.3g} and "
                             f"{spacing / 3:.3g} cm-1 first (start values from the P-R maxima)")

    def final_stage(self) -> None:
        f = self.fitter
        f.run(stage="fit")
        for _ in range(3):
            newly = self._hold_undetermined()
            if not newly:
                break
            f.run(stage="refit")

    def _hold_undetermined(self) -> list[str]:
        return hold_undetermined(self)

    def _b_scale(self) -> float:
        th = dict(zip(self.model.names, self.fitter.theta, strict=True))
        return float(th.get("B_lower", th.get("B_e", 1.0)))

    # -------------------------------------------------------------- result
    def result(self, spec: dict, pr: PRSeparation | None, widen: bool = True,
               contour: bool = False) -> BandFit:
        """The fit's result; ``widen``: standard errors widened for a structured residual
        (:mod:`.structure`), else only scaled by the engine's factor f as before the
        widening existed (what a session record without ``widen_errors`` replays);
        ``contour``: the P–R maxima of model and data compared (:mod:`.crosscheck`)."""
        f = self.fitter
        model = self.model
        cov, r, chi2, scale, idx = f.covariance()
        theta = f.theta
        names = model.names
        if widen:
            cov, factors = self._widened(cov, r, scale, idx)
            error_scale = max((h for n, h in factors.items() if not n.startswith("baseline_")),
                              default=1.0)
            structured = bool(factors)
        else:
            factors, error_scale, structured = {}, float(scale), bool(scale > 1.0)
        # (after the widening: its Jacobian is computed as before this check existed)
        comp = model.components(theta)
        check = check_contour(self.x, self.y, comp["model"], comp["baseline"], self.opts.y_kind,
                              pr, self._b_scale()) if contour else None
        if check is not None:
            cov, check = widen_for_contour(cov, theta, names, list(idx), check)
        se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
        status = ["free" if p.vary else ("held" if p.name in self.held else "fixed")
                  for p in self.params]
        notes = [p.note for p in self.params]
        for n, h in factors.items():
            if h > 1.0:
                k = names.index(n)
                notes[k] = "; ".join(filter(None, [
                    notes[k], f"standard error widened ×{h:.2g} (structured residual)"]))
        ptab = pd.DataFrame({
            "name": names, "value": theta, "stderr": se, "status": status,
            "unit": [p.unit for p in self.params], "start": [p.value for p in self.params],
            "source": [p.source for p in self.params], "note": notes},
            columns=PARAMETER_COLUMNS)
        free_names = [names[k] for k in idx]
        sub = cov[np.ix_(idx, idx)]
        d = np.sqrt(np.clip(np.diag(sub), 1e-300, None))
        corr = sub / np.outer(d, d) if len(idx) else sub
        isos = list(self.opts.isotopologues)
        main = self.mol.isotopologue(isos[0])
        rhos = [1.0] if len(isos) == 1 else \
            [math.sqrt(main.reduced_mass / self.mol.isotopologue(n).reduced_mass) for n in isos]
        C = self._constant_map()
        # a held parameter's start is a guess: its scale enters the derived constants that
        # depend on it directly (e.g. a minor isotopologue's band origin on ω_e x_e)
        B, step = self._b_scale(), self.step
        prior = np.array([relevance(p.name, theta[k], p.value, B, step) ** 2
                          if p.name in self.held else 0.0 for k, p in enumerate(self.params)])
        prior[~np.isfinite(prior)] = 0.0
        consts = derived_constants(model, theta, cov + np.diag(prior), C, joint=self.opts.joint,
                                   isotopologues=isos,
                                   rhos=rhos, reduced_masses=[self.mol.isotopologue(n).reduced_mass
                                                              for n in isos],
                                   band=self.opts.bands[0])
        consts = mark_not_fitted(consts, ptab)
        dof = max(self.y.size - len(idx), 1)
        reasons = self._reasons(corr, free_names, theta, se, scale, widen)
        if check is not None and not check.passed:
            reasons.append(contour_reason(check, dict(zip(names, theta, strict=True)),
                                          free_names))
        sol = f.last
        converged = bool(sol.converged) if sol is not None else False
        if not converged:
            reasons.insert(0, f"the fit did not converge ({sol.message if sol else 'no run'}); "
                              "the best parameters so far are kept")
        return BandFit(
            parameters=ptab, constants=consts,
            correlation=pd.DataFrame(corr, index=free_names, columns=free_names),
            covariance=pd.DataFrame(sub, index=free_names, columns=free_names),
            x=self.x, y=self.y, model_y=comp["model"], baseline_y=comp["baseline"], residual=r,
            y_kind=self.opts.y_kind, status="doubtful" if reasons else "ok", reasons=reasons,
            messages=self.messages + self._start_messages(), converged=converged,
            message=sol.message if sol else "", nfev=f.nfev, njev=f.njev,
            elapsed=time.perf_counter() - self.t0, chisqr=chi2, redchi=chi2 / dof,
            error_scale=error_scale, error_factors=factors,
            structured_residual=structured, domain=self.opts.domain,
            lines=model.line_table(theta), quick=pr, contour=check,
            spec={**spec, "structure_temperature": self.t_struct},
            theta={n: float(v) for n, v in zip(names, theta, strict=True)})

    def _widened(self, cov, r, scale, idx) -> tuple[np.ndarray, dict[str, float]]:
        """The covariance with standard errors widened for a structured residual
        (:mod:`.structure`), and the factor of each free parameter ({} when not widened)."""
        if not scale > 1.0 or len(idx) == 0:
            return cov, {}
        J = self.fitter.jacobian(idx)
        cov, factors = widen(cov, idx, scale, np.asarray(J), r, self.model.names,
                             bread=self.fitter.normal_inverse())
        if factors:
            top = sorted(factors.items(), key=lambda kv: -kv[1])
            top = [(n, h) for n, h in top if not n.startswith("baseline_")] or top
            shown = ", ".join(f"{n} ×{h:.2g}" for n, h in top)
            self.messages.append(
                "the residual is structured, not noise (neighbouring points move together: "
                "the model misses something); the standard errors were widened by up to "
                f"×{top[0][1]:.2g} to allow for it ({shown})")
            k_res = self.model.index.get("resolution")
            if k_res is not None and not self.params[k_res].vary and self.resolution is not None:
                self.messages.append(
                    "the resolution was given and held: a spectrum smoothed after it was "
                    "recorded (digitised from a plot, resampled) is wider than its nominal "
                    "resolution; refit with resolution=None to let the fit find it")
        return cov, factors

    def _constant_map(self) -> np.ndarray:
        from .params import constant_map

        return constant_map(self.opts.joint, list(self.opts.isotopologues), self.opts.centrifugal,
                            self.model.names, self.opts.bands[0])

    def _start_messages(self) -> list[str]:
        return [f"start of {p.name}: {p.source}" for p in self.params
                if p.source not in ("fixed", "given", "default") and not p.name.startswith("baseline")]

    def _reasons(self, corr, free_names, theta, se, scale, widen=True) -> list[str]:
        out = []
        k_s = self.model.index["band_area"]
        if theta[k_s] < 3.0 * se[k_s] or theta[k_s] <= 0:
            out.append(f"no band detected: the band area is {theta[k_s]:.3g} ± {se[k_s]:.2g}; check "
                       "the range, the molecule and the band")
        prim = [k for k, n in enumerate(free_names) if n.split("(")[0] in PRIMARY]
        for a in range(len(prim)):
            for b in range(a + 1, len(prim)):
                i, j = prim[a], prim[b]
                if abs(corr[i, j]) > 0.95:
                    ni, nj = free_names[i], free_names[j]
                    hint = ("fix one, e.g. fix={'temperature': 296}" if "temperature" in (ni, nj)
                            else f"fix one of them, e.g. fix={{'{nj}': ...}}")
                    out.append(f"{ni} and {nj} are {corr[i, j]:+.3f} correlated: the data determine "
                               f"only a combination of them; {hint}")
        for k, n in enumerate(self.model.names):
            if n in free_names and n.split("(")[0] in PRIMARY and n != "band_area":
                v, e = theta[k], se[k]
                if n.startswith("band_origin"):
                    if e > 0.5 * self._b_scale():
                        out.append(f"{n} is not determined (standard error {e:.3g} cm-1)")
                elif abs(v) > 0 and e > 0.25 * abs(v) and not n.startswith("alpha"):
                    out.append(f"{n} is not determined ({v:.4g} ± {e:.2g})")
        if self.st.get("spacing") and not self.st.get("indexed", True) and \
                not {"band_origin", "B_lower", "B_e"} & set(self.user_start):
            out.append(("the lines are resolved, and with every other line missing (nuclear-spin "
                        "statistics) they are not indexed from the band-origin gap, so the"
                        if self.st.get("index_skipped") else
                        "the lines are resolved but the band-origin gap was not found, so the")
                       + " rotational numbering comes from the contour only; check B against the line "
                       "spacing, or give start values (start={'band_origin': ..., 'B_lower': ...})")
        if scale > 3.0:
            # without the widening the errors are scaled by f alone (the wording of then)
            what = f"noise scale ×{scale:.1f}" if widen else f"errors scaled by {scale:.1f}"
            out.append(f"the residuals are strongly correlated ({what}): "
                       "the model misses structure (other bands, impurity lines, baseline, "
                       "line shape)")
        return out

