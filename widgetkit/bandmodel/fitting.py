"""Fit a band model to a spectrum: :func:`fit` and :func:`fit_spectrum`."""

from __future__ import annotations

import functools
import math
import time
from collections.abc import Callable, Mapping

import numpy as np
import pandas as pd
from scipy.integrate import trapezoid
from threadpoolctl import threadpool_limits

from ..errors import FitError
from ..spectrum import Spectrum
from .build import ModelOptions, build_model, kratzer_d
from .checks import (
    BASELINES,
    check_bands,
    check_choice,
    check_data,
    check_isotopologues,
    check_mapping,
    check_molecule,
    check_number,
    instrument_name,
)
from .engine import Fitter
from .instrument import fwhm_factor
from .params import PRIMARY
from .quick import PRSeparation
from .result import PARAMETER_COLUMNS, BandFit, derived_constants
from .start import estimate_starts

__all__ = ["fit", "fit_spectrum"]

#: a secondary parameter is "not determined" when its standard error exceeds this scale
def _relevance(name: str, value: float, start: float, B: float, step: float) -> float:
    base = name.split("(")[0]
    if base in ("D", "D_e", "D_upper", "D_lower"):
        return max(abs(start), 1e-12)
    if base == "lorentz_hwhm":
        return max(abs(value), 0.005)
    if base == "resolution":
        return max(abs(value), step)
    if base == "gauss_fwhm":
        return max(abs(value), step)
    if base == "omega_e_x_e":
        return 0.5 * max(abs(start), 1e-6)
    if base.startswith("abundance_ratio"):
        return 0.5 * max(abs(start), 1e-6)
    if base == "band_origin":
        return 0.5 * B
    if base in ("B_upper", "B_lower"):
        return 0.05 * B
    if base == "herman_wallis":
        return 0.05
    return math.inf


def _one_blas_thread(func):
    """Run ``func`` with one BLAS thread: the dense algebra here is (data × parameters)
    products, where more threads only contend on a busy machine (lines.fit measured the
    same)."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with threadpool_limits(limits=1, user_api="blas"):
            return func(*args, **kwargs)

    return wrapper


@_one_blas_thread
def fit(x, y, molecule, *, band=(1, 0), temperature: float | None = None,
        resolution: float | None = None, instrument: str = "gaussian",
        isotopologues="natural", fix: Mapping | None = None, baseline: str | None = "linear",
        y_kind: str = "absorbance", joint: bool = True, centrifugal: str = "shared",
        shape: str = "doppler", lorentz_hwhm: float | None = None, convolve: str = "auto",
        start: Mapping | None = None, free=None, max_nfev: int = 400, max_time: float = 120.0,
        progress: Callable | None = None) -> BandFit:
    """Fit the spectrum of a diatomic's band (or bands) to the data.

    The model (see :mod:`widgetkit.bandmodel`): the simulator's line list (term values,
    Hönl–London and Boltzmann factors, isotopologues), each line a Voigt profile
    (Doppler width from T and mass, Lorentzian HWHM γ), seen through the instrument
    line shape, on a polynomial absorbance baseline.

    Parameters
    ----------
    x, y : array_like (N,)
        Wavenumbers (cm⁻¹) and absorbance (or transmittance, fraction, with ``y_kind``).
        The range should hold the band; other bands and impurity lines bias the fit.
    molecule : Diatomic or str
        ``wk.Diatomic("C", "O")`` or a formula (``"CO"``).
    band : (v_upper, v_lower) or list of them
        Default the fundamental (1, 0). Several bands need ``joint=True``.
    temperature : float, optional
        Start value of T (K); default estimated, else 296 K. To fix it use
        ``fix={"temperature": 296}``.
    resolution : float, optional
        Instrument resolution Δ (cm⁻¹), held fixed: the FWHM of a Gaussian instrument, or
        1/L (L the maximum optical path difference) of an FTIR (convention in
        :mod:`.instrument`). Not given: fitted (start from the line widths or a scan), and
        held when the data cannot tell it. :func:`fit_spectrum` takes it from the file.
    instrument : {"gaussian", "triangular", "boxcar"}
        The instrument line shape: Gaussian (dispersive), triangular apodisation (sinc²)
        or boxcar (unapodised FTIR, sinc).
    isotopologues : "natural", "free", "main", list of names, or dict name -> abundance
        Which isotopologues are modelled and whether their abundance ratios are fixed
        (natural, from ``periodictable``; or as given) or fitted ("free").
    fix : dict, optional
        Parameters held at the given values, e.g. ``{"temperature": 298}``. When B and T
        come from an unresolved contour they are strongly correlated: fix one.
    baseline : {"linear", None, "constant", "poly2", "poly3"}
        Polynomial absorbance baseline in t = (x − centre)/half-range.
    y_kind : {"absorbance", "transmittance"}
    joint : bool
        True (default): one set of mass-independent constants (ω_e x_e, B_e, α_e, D_e and
        the main isotopologue's band origin; Dunham-type scaling by reduced mass) for all
        isotopologues. False: each isotopologue its own band constants (one band only).
    centrifugal : {"shared", "separate", "none"}
        With ``joint=False``: D′ = D″ (default), D′ and D″, or no centrifugal distortion.
    shape : {"doppler", "voigt"}
        Gaussian part of each line from T and the mass (default), or a free Gaussian FWHM
        ``gauss_fwhm`` common to all lines.
    lorentz_hwhm : float, optional
        Lorentzian (pressure) HWHM in cm⁻¹, held fixed when given; else fitted, and held at
        its start when the data cannot tell it (unresolved lines).
    convolve : {"auto", "absorbance", "transmittance"}
        Where the instrument acts (:mod:`.render`). "absorbance" is the absorbance
        approximation (exact for weak lines or lines wider than the instrument, and how
        :mod:`widgetkit.simulate` applies its resolution); "transmittance" is the exact
        physics of a spectrometer and needs a grid that resolves the Doppler width;
        "auto" fits the approximation and, when lines are strong (monochromatic peak
        absorbance above 0.1) and narrower than the instrument and the residuals show
        structure, also the exact form, keeping the one with the lower χ².
    start : dict, optional
        Start values by parameter name (overriding the estimates).
    free : list of str, optional
        Parameters fixed by default to be fitted (``herman_wallis``, ``omega_e_y_e``,
        ``gamma_e``, ``beta_e``, the abundance ratios).
    max_nfev, max_time : int, float
        Budget of model evaluations and seconds (the best result so far is kept and the
        fit is marked as not converged).
    progress : callable, optional
        ``progress(stage, iteration, chisqr, elapsed)``.

    Returns
    -------
    BandFit

    Raises
    ------
    FitError
        Bad input (names the argument and value), or no band found in the data.
    """
    t0 = time.perf_counter()
    x, y, y_kind = check_data(x, y, y_kind)
    mol = check_molecule(molecule)
    bands = check_bands(band)
    joint = bool(joint)
    if len(bands) > 1 and not joint:
        raise FitError("several bands need joint=True (one set of equilibrium constants)")
    iso_names, ratios, free_ab = check_isotopologues(mol, isotopologues)
    inst = instrument_name(instrument)
    if baseline not in BASELINES:
        raise FitError(f"baseline must be one of {', '.join(repr(k) for k in BASELINES if k)} or "
                       f"None, got {baseline!r}")
    check_choice("centrifugal", centrifugal, ("shared", "separate", "none"))
    check_choice("shape", shape, ("doppler", "voigt"))
    check_choice("convolve", convolve, ("auto", "absorbance", "transmittance"))
    temperature = check_number("temperature", temperature, positive=True)
    resolution = check_number("resolution", resolution)
    lorentz_hwhm = check_number("lorentz_hwhm", lorentz_hwhm)
    spec = {"band": [list(b) for b in bands], "temperature": temperature, "resolution": resolution,
            "instrument": inst, "isotopologues": isotopologues if not isinstance(isotopologues, tuple)
            else list(isotopologues), "fix": dict(fix or {}), "baseline": baseline,
            "y_kind": y_kind, "joint": joint, "centrifugal": centrifugal, "shape": shape,
            "lorentz_hwhm": lorentz_hwhm, "convolve": convolve, "start": dict(start or {}),
            "free": list(free or []), "molecule": mol.to_dict()}
    user_start = dict(start or {})
    try:
        st, sources, pr = estimate_starts(x, y, y_kind=y_kind, band=bands[0],
                                          temperature=temperature, resolution=resolution)
    except FitError:
        if not {"band_origin", "B_lower"} <= set(user_start):
            raise
        st, sources, pr = _fallback_starts(x, y, y_kind, user_start, temperature), {}, None
    st = _complete_starts(st, user_start, fix or {}, resolution, lorentz_hwhm, inst, x, pr)
    domain = "absorbance" if convolve == "auto" else convolve
    opts = ModelOptions(bands=bands, joint=joint, centrifugal=centrifugal, isotopologues=iso_names,
                        abundance_ratios=ratios, free_abundances=free_ab, shape=shape,
                        instrument=inst, domain=domain, baseline_degree=BASELINES[baseline],
                        y_kind=y_kind)
    t_struct = 1.5 * max(st["temperature"], 300.0)
    run = _Run(x, y, mol, opts, st, sources, t_struct, user_start, fix or {}, free or [],
               resolution, lorentz_hwhm, max_nfev, max_time, progress, t0)
    run.stages()
    if run.fitter.theta[run.fitter.index("temperature")] * 1.2 > t_struct:
        t_struct = 1.5 * run.fitter.theta[run.fitter.index("temperature")]
        run.messages.append(f"rebuilt the line list for {t_struct:.0f} K (the fit went hot)")
        run = run.rebuilt(t_struct)
        run.final_stage()
    if convolve == "auto":
        run = _maybe_exact(run)
    return run.result(spec, pr)


def fit_spectrum(spectrum: Spectrum, molecule, **options) -> BandFit:
    """:func:`fit` on a :class:`~widgetkit.Spectrum`: ``y_kind`` from the spectrum, and the
    resolution from ``meta["resolution"]`` (set by the readers from ``##RESOLUTION``)
    unless ``resolution=`` is given."""
    if not isinstance(spectrum, Spectrum):
        raise FitError(f"fit_spectrum needs a widgetkit Spectrum, got {type(spectrum).__name__}")
    opts = dict(options)
    if opts.get("resolution") is None:
        res = (spectrum.meta or {}).get("resolution")
        if isinstance(res, (int, float)) and math.isfinite(res) and res > 0:
            opts["resolution"] = float(res)
    return fit(spectrum.x, spectrum.y, molecule, y_kind=spectrum.y_kind, **opts)


# ---------------------------------------------------------------------- start values
def _fallback_starts(x, y, y_kind, user_start, temperature) -> dict:
    a = -np.log10(np.clip(y, 1e-6, None)) if y_kind == "transmittance" else y
    B = float(user_start["B_lower"])
    nu = float(user_start["band_origin"])
    return {"band_origin": nu, "B_lower": B, "B_upper": B * 0.99, "D": kratzer_d(B, nu),
            "temperature": temperature or 296.0, "lorentz_hwhm": 0.05,
            "band_area": float(max(trapezoid(np.clip(a - np.median(a), 0, None), x), 1e-9)),
            "baseline": [float(np.median(a)), 0.0]}


def _complete_starts(st, user_start, fix, resolution, lorentz, inst, x, pr) -> dict:
    st = dict(st)
    st["resolution_given"] = resolution is not None
    step = float(np.median(np.diff(x)))
    if resolution is not None:
        st["resolution"] = resolution
    elif "observed_fwhm" in st:
        st["resolution"] = max(st["observed_fwhm"] / fwhm_factor(inst), 2.0 * step)
    else:
        st["resolution"] = max(4.0 * step, 0.5 * st["B_lower"])
    if lorentz is not None:
        st["lorentz_hwhm"] = lorentz
    elif "observed_fwhm" in st:
        st["lorentz_hwhm"] = max(0.1 * st["observed_fwhm"], 1e-4)
    st["gauss_fwhm"] = st.get("observed_fwhm", st["resolution"])
    st.update({k: v for k, v in user_start.items() if not k.startswith("baseline_")})
    st.update({k: v for k, v in fix.items() if not k.startswith("baseline_")})
    return st


# ---------------------------------------------------------------------- the run
class _Run:
    """One model, its fitter, and the staged fit."""

    def __init__(self, x, y, mol, opts, st, sources, t_struct, user_start, fix, free, resolution,
                 lorentz, max_nfev, max_time, progress, t0, messages=None, theta=None):
        self.x, self.y, self.mol, self.opts, self.st = x, y, mol, opts, st
        self.sources, self.t_struct = sources, t_struct
        self.user_start, self.fix, self.free_opt = dict(user_start), dict(fix), list(free)
        self.resolution, self.lorentz = resolution, lorentz
        self.max_nfev, self.max_time, self.progress, self.t0 = max_nfev, max_time, progress, t0
        self.messages = list(messages or [])
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

    def _configure(self) -> None:
        names = [p.name for p in self.params]
        start = check_mapping("start", self.user_start, names)
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

    def rebuilt(self, t_struct: float) -> _Run:
        theta = dict(zip(self.model.names, self.fitter.theta, strict=True))
        st = {**self.st, **{k: v for k, v in theta.items() if not k.startswith("baseline_")}}
        st["baseline"] = [theta[n] for n in self.model.base_names]
        if "B_e" in theta:  # joint: band constants of the main isotopologue for the set-up
            vu, vl = self.opts.bands[0]
            st["B_lower"] = theta["B_e"] - theta["alpha_e"] * (vl + 0.5)
            st["B_upper"] = theta["B_e"] - theta["alpha_e"] * (vu + 0.5)
            st["D"] = theta["D_e"]
        new = _Run(self.x, self.y, self.mol, self.opts, st, self.sources, t_struct,
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
    def stages(self) -> None:
        f = self.fitter
        linear = [p.name for p in self.params if p.vary and
                  (p.name == "band_area" or p.name.startswith("baseline_"))]
        if linear:
            f.run(linear, stage="linear", max_nfev=10)
        if not self.st.get("indexed", True) and self.st.get("spacing"):
            self._coarse_to_fine(float(self.st["spacing"]))
        res = self.params[f.index("resolution")]
        if res.vary and res.source == "scanned":
            B = self.st["B_lower"]
            step = float(np.median(np.diff(self.x)))
            cands = np.geomspace(max(2 * step, 0.02 * B), max(8 * B, 4 * step), 9)
            best = f.scan("resolution", cands, linear)
            res.value = best
            self.messages.append(f"resolution not given: scanned, best start {best:.3g} cm-1")
        self.final_stage()

    def _coarse_to_fine(self, spacing: float) -> None:
        """Resolved lines without indexed start values: fit the contour smoothed (data and
        model alike) to a Gaussian FWHM of one line spacing, then of a third of it, so that
        the band constants come into the basin of the full fit."""
        from scipy.ndimage import gaussian_filter1d

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
            f.y = gaussian_filter1d(y0, sigma / dx, mode="nearest")
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
        f = self.fitter
        cov, *_ = f.covariance()
        B = self._b_scale()
        step = float(np.median(np.diff(self.x)))
        newly = []
        for k, p in enumerate(self.params):
            if not (p.vary and p.secondary) or p.name.startswith("baseline_"):
                continue
            se = math.sqrt(max(cov[k, k], 0.0))
            scale = _relevance(p.name, f.theta[k], p.value, B, step)
            at_bound = f.theta[k] <= p.lower + 1e-12 or f.theta[k] >= p.upper - 1e-12
            if se > scale or not np.isfinite(se) or (at_bound and p.name != "lorentz_hwhm"):
                start = p.value
                p.vary = False
                f.theta[k] = start
                why = ("at its bound" if at_bound else
                       f"not determined by the data (standard error {se:.2g} > {scale:.2g})")
                self.held[p.name] = why
                p.note = f"held at its start value {start:.6g}: {why}"
                newly.append(p.name)
            elif p.name == "lorentz_hwhm" and at_bound:
                p.vary = False
                self.held[p.name] = "at zero"
                p.note = "held at 0: the lines show no Lorentzian width"
                newly.append(p.name)
        if newly:
            self.messages.append("held " + ", ".join(f"{n} ({self.held[n]})" for n in newly))
        return newly

    def _b_scale(self) -> float:
        th = dict(zip(self.model.names, self.fitter.theta, strict=True))
        return float(th.get("B_lower", th.get("B_e", 1.0)))

    # -------------------------------------------------------------- result
    def result(self, spec: dict, pr: PRSeparation | None) -> BandFit:
        f = self.fitter
        model = self.model
        cov, r, chi2, scale, idx = f.covariance()
        theta = f.theta
        names = model.names
        se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
        status = ["free" if p.vary else ("held" if p.name in self.held else "fixed")
                  for p in self.params]
        ptab = pd.DataFrame({
            "name": names, "value": theta, "stderr": se, "status": status,
            "unit": [p.unit for p in self.params], "start": [p.value for p in self.params],
            "source": [p.source for p in self.params], "note": [p.note for p in self.params]},
            columns=PARAMETER_COLUMNS)
        free_names = [names[k] for k in idx]
        sub = cov[np.ix_(idx, idx)]
        d = np.sqrt(np.clip(np.diag(sub), 1e-300, None))
        corr = sub / np.outer(d, d) if len(idx) else sub
        isos = list(self.opts.isotopologues)
        main = self.mol.isotopologue(isos[0])
        rhos = [math.sqrt(main.reduced_mass / self.mol.isotopologue(n).reduced_mass) for n in isos]
        C = self._constant_map()
        consts = derived_constants(model, theta, cov, C, joint=self.opts.joint, isotopologues=isos,
                                   rhos=rhos, reduced_masses=[self.mol.isotopologue(n).reduced_mass
                                                              for n in isos],
                                   band=self.opts.bands[0])
        comp = model.components(theta)
        dof = max(self.y.size - len(idx), 1)
        reasons = self._reasons(corr, free_names, theta, se, scale)
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
            error_scale=scale, domain=self.opts.domain, lines=model.line_table(theta), quick=pr,
            spec={**spec, "structure_temperature": self.t_struct},
            theta={n: float(v) for n, v in zip(names, theta, strict=True)})

    def _constant_map(self) -> np.ndarray:
        from .params import constant_map

        return constant_map(self.opts.joint, list(self.opts.isotopologues), self.opts.centrifugal,
                            self.model.names, self.opts.bands[0])

    def _start_messages(self) -> list[str]:
        return [f"start of {p.name}: {p.source}" for p in self.params
                if p.source not in ("fixed", "given", "default") and not p.name.startswith("baseline")]

    def _reasons(self, corr, free_names, theta, se, scale) -> list[str]:
        out = []
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
            out.append("the lines are resolved but the band-origin gap was not found, so the "
                       "rotational numbering comes from the contour only; check B against the line "
                       "spacing, or give start values (start={'band_origin': ..., 'B_lower': ...})")
        if scale > 3.0:
            out.append(f"the residuals are strongly correlated (errors scaled by {scale:.1f}): "
                       "the model misses structure (other bands, impurity lines, baseline, "
                       "line shape)")
        return out


def _peak_monochromatic(run: _Run) -> tuple[float, float]:
    """(highest monochromatic peak absorbance, instrument FWHM / line FWHM)."""
    th = run.fitter.theta
    m = run.model
    pos, area, sig, *_ = m.lines(th)
    gamma = max(m._get(th, "lorentz_hwhm"), 0.0)
    from scipy.special import voigt_profile

    peak = float(np.max(area * voigt_profile(0.0, np.maximum(sig, 1e-9), gamma)))
    line_fwhm = float(np.median(2.3548 * sig)) + 2 * gamma
    inst = fwhm_factor(m.instrument) * m._get(th, "resolution")
    return peak, inst / max(line_fwhm, 1e-12)


def _maybe_exact(run: _Run) -> _Run:
    """The "auto" convolution: try the transmittance domain when it can matter."""
    peak, ratio = _peak_monochromatic(run)
    f = run.fitter
    noise = _noise(run.y)
    rms = math.sqrt(f.chisqr() / run.y.size)
    if not (peak > 0.1 and ratio > 1.0):
        return run
    if rms < 1.3 * noise:
        run.messages.append(
            f"absorbance approximation kept: monochromatic peak absorbance {peak:.2g}, but the "
            f"residuals ({rms:.3g}) are at the noise level ({noise:.3g})")
        return run
    opts = ModelOptions(**{**run.opts.__dict__, "domain": "transmittance"})
    try:
        alt = _Run(run.x, run.y, run.mol, opts, run.st, run.sources, run.t_struct, run.user_start,
                   run.fix, run.free_opt, run.resolution, run.lorentz, run.max_nfev,
                   run.max_time, run.progress, run.t0, run.messages)
    except FitError as exc:
        run.messages.append(f"the exact (transmittance) convolution was not tried: {exc}")
        return run
    for p_new, p_old in zip(alt.params, run.params, strict=True):
        p_new.vary, p_new.note, p_new.source = p_old.vary, p_old.note, p_old.source
    alt.fitter.theta = f.theta.copy()
    alt.held = dict(run.held)
    alt.final_stage()
    c_abs, c_tr = f.chisqr(), alt.fitter.chisqr()
    if c_tr < c_abs:
        alt.messages.append(f"convolved in transmittance: chi-square {c_tr:.4g} against {c_abs:.4g} "
                            f"with the absorbance approximation (monochromatic peak absorbance "
                            f"{peak:.2g})")
        return alt
    run.messages.append(f"absorbance approximation kept: chi-square {c_abs:.4g} against {c_tr:.4g} "
                        "convolving in transmittance")
    return run


def _noise(y: np.ndarray) -> float:
    d = np.diff(y)
    return float(1.4826 * np.median(np.abs(d - np.median(d))) / math.sqrt(2.0))
