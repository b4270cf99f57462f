"""Fit a band model to a spectrum: :func:`fit` and :func:`fit_spectrum`."""

from __future__ import annotations

import dataclasses
import functools
import math
import time
from collections.abc import Callable, Mapping

import numpy as np
from scipy.integrate import trapezoid
from threadpoolctl import ThreadpoolController

from ..errors import FitError
from ..spectrum import Spectrum
from .build import ModelOptions, kratzer_d
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
from .deposit import ready_allocator
from .domain import exact_for_transmittance, guess_y_kind, note_approximation
from .instrument import fwhm_factor
from .linear import check_kind, check_linear_options, is_linear_polyatomic, spacing_in_B
from .quick import _absorbance_like
from .result import BandFit
from .stages import Run
from .start import estimate_starts

__all__ = ["fit", "fit_spectrum"]


_CONTROLLER: ThreadpoolController | None = None


def _one_blas_thread(func):
    """Run ``func`` with one BLAS thread: the dense algebra here is (data × parameters)
    products, where more threads only contend on a busy machine (lines.fit measured the
    same). The thread-pool libraries are looked up once (a lookup reads the process's
    memory map: 0.6 ms, a hundredth of a fit). The C allocator is readied for megabyte
    arrays once per process (:func:`.deposit.ready_allocator`)."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        global _CONTROLLER
        ready_allocator()
        if _CONTROLLER is None:
            _CONTROLLER = ThreadpoolController()
        with _CONTROLLER.limit(limits=1, user_api="blas"):
            return func(*args, **kwargs)

    return wrapper


@_one_blas_thread
def fit(x, y, molecule, *, band=(1, 0), temperature: float | None = None,
        resolution: float | None = None, instrument: str = "gaussian",
        isotopologues="natural", fix: Mapping | None = None, baseline: str | None = "linear",
        y_kind: str | None = None, joint: bool = True, centrifugal: str = "shared",
        shape: str = "doppler", lorentz_hwhm: float | None = None, convolve: str = "auto",
        start: Mapping | None = None, free=None, kind: str | None = None,
        max_nfev: int = 3000, max_time: float = 60.0, widen_errors: bool = True,
        check_contour: bool = True, second_look: bool = True,
        progress: Callable | None = None,
        meta: Mapping | None = None) -> BandFit:
    """Fit the spectrum of a diatomic's band (or bands) to the data.

    The model (see :mod:`widgetkit.bandmodel`): the simulator's line list (term values,
    Hönl–London and Boltzmann factors, isotopologues), each line a Voigt profile
    (Doppler width from T and mass, Lorentzian HWHM γ), seen through the instrument
    line shape, on a polynomial absorbance baseline.

    Parameters
    ----------
    x, y : array_like (N,)
        Wavenumbers (cm⁻¹) and absorbance, or transmittance (a fraction).
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
    y_kind : {"absorbance", "transmittance"}, optional
        What ``y`` is; default from the data: transmittance when the band dips below a
        baseline near 1, absorbance when it rises (said in the messages).
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
        Where the instrument acts (:mod:`.render`). "absorbance": the absorbance
        approximation A_obs = ILS ⊛ A (exact for weak lines and for lines wider than the
        instrument; it is also how :mod:`widgetkit.simulate` applies its resolution).
        "transmittance": the physics of a spectrometer, A_obs = −log₁₀(ILS ⊛ 10^(−A)), on a
        grid that resolves the lines. "auto": absorbance data get the approximation (a
        message says when it fails: lines narrower than the instrument with monochromatic
        peak absorbance above 0.5); transmittance data are convolved in transmittance,
        and when lines are strong and the residuals show structure the approximation is
        fitted too and the lower χ² kept; spectra whose ``meta`` says they were made by
        :mod:`widgetkit.simulate` get the approximation their maker used.
    start : dict, optional
        Start values by parameter name (overriding the estimates).
    free : list of str, optional
        Parameters fixed by default to be fitted (``herman_wallis``, ``omega_e_y_e``,
        ``gamma_e``, ``beta_e``, the abundance ratios).
    kind : {None, "parallel", "perpendicular"}
        The band type: None or "parallel" (P and R branches, a Σ–Σ band); a perpendicular
        (Π–Σ) band with its Q branch is not modelled and is refused with what is supported.
    max_nfev, max_time : int, float
        Budget of model evaluations and seconds (the best result so far is kept and the
        fit is marked as not converged).
    widen_errors : bool
        True (default): when the residual is structured (neighbouring points move together:
        the model misses something) each standard error is widened by its own factor
        (:mod:`.structure`; ``error_factors``, a message and a note per parameter). False:
        the standard errors are only scaled by the residual's single correlation factor
        (``error_scale``), as fits did before the widening existed; a session step recorded
        without this option replays that way.
    check_contour : bool
        True (default): the P and R branch maxima of the fitted model are compared with the
        data's (the same smoothing; :mod:`.crosscheck`). A model that misses them by more
        than the noise allows and 2 % of the separation does not describe the contour (its
        least-squares B or T can then be far off with a small standard error): the fit is
        "doubtful", the reason gives B from the separation alone, and the standard errors
        of the parameters the contour determines (B and T; T alone when the lines are
        resolved) are widened by the relative error the mismatch implies (``contour``). A
        session step recorded without this option replays with False, as it was made.
    second_look : bool
        True (default): an estimated ω_e x_e or D that ends implausibly far from its start
        (the model's misfit) is first estimated again (Pekeris, Kratzer) from the fitted B,
        α_e and band origin and judged, and held, against that (the first estimate comes
        from the first B, which can be far off); and when one is held so after the
        resolution was scanned only after the coarse stages, the fit is repeated with the
        resolution scanned first and the lower χ² kept (said in the messages). False: as
        before these rules, as a session step recorded without this option replays.
    progress : callable, optional
        ``progress(stage, iteration, chisqr, elapsed)``.
    meta : dict, optional
        The spectrum's metadata (:func:`fit_spectrum` passes it): ``meta["resolution"]``
        is used when ``resolution`` is not given, ``meta["simulated"]`` as said under
        ``convolve``.

    Returns
    -------
    BandFit

    Raises
    ------
    FitError
        Bad input (names the argument and value), or no band found in the data.
    """
    t0 = time.perf_counter()
    for name, flag in (("widen_errors", widen_errors), ("check_contour", check_contour),
                       ("second_look", second_look)):
        if not isinstance(flag, bool | np.bool_):
            raise FitError(f"{name} must be True or False, got {flag!r}")
    o = _options(x, y, molecule, band=band, temperature=temperature, resolution=resolution,
                 instrument=instrument, isotopologues=isotopologues, fix=fix, baseline=baseline,
                 y_kind=y_kind, joint=joint, centrifugal=centrifugal, shape=shape,
                 lorentz_hwhm=lorentz_hwhm, convolve=convolve, start=start, free=free, meta=meta,
                 kind=kind)
    x, y, mol, bands, spec = o["x"], o["y"], o["mol"], o["bands"], o["spec"]
    y_kind, resolution, temperature = o["y_kind"], o["resolution"], o["temperature"]
    start, fix = o["start"], o["fix"]
    lorentz_hwhm, inst, simulated, detected = o["lorentz_hwhm"], o["inst"], o["simulated"], \
        o["detected"]
    user_start = dict(start or {})
    try:
        st, sources, pr = estimate_starts(x, y, y_kind=y_kind, band=bands[0],
                                          temperature=temperature, resolution=resolution,
                                          spacing_in_B=spacing_in_B(mol))
    except FitError:
        if not {"band_origin", "B_lower"} <= set(user_start):
            raise
        st, sources, pr = _fallback_starts(x, y, y_kind, user_start, temperature), {}, None
    st = _complete_starts(st, user_start, fix or {}, resolution, lorentz_hwhm, inst, x, pr)
    # every fit starts in the absorbance approximation (cheap, and a good start for the exact one)
    opts = dataclasses.replace(o["model_options"]("absorbance"),
                               second_look=bool(second_look))
    t_struct = 1.5 * max(st["temperature"], 300.0)
    said = []
    if detected:
        said.append(f"y_kind not given: the data look like {y_kind}")
    if simulated and convolve == "auto":
        said.append("the spectrum was made by widgetkit.simulate, which applies the "
                    "instrument in absorbance: the absorbance approximation is used")

    def new_run() -> Run:
        return Run(x, y, mol, opts, st, sources, t_struct, user_start, fix or {}, free or [],
                   resolution, lorentz_hwhm, max_nfev, max_time, progress, t0, said)

    run = new_run()
    run.stages()
    if second_look:
        run = _second_look(run, new_run)
    if run.fitter.theta[run.fitter.index("temperature")] * 1.2 > t_struct:
        t_struct = 1.5 * run.fitter.theta[run.fitter.index("temperature")]
        run.messages.append(f"rebuilt the line list for {t_struct:.0f} K (the fit went hot)")
        run = run.rebuilt(t_struct)
        run.final_stage()
    if convolve == "transmittance":
        run = exact_for_transmittance(run, force=True)
    elif convolve == "auto":
        run = (exact_for_transmittance(run) if y_kind == "transmittance" and not simulated
               else note_approximation(run, simulated))
    return run.result(spec, pr, widen=bool(widen_errors), contour=bool(check_contour))


def _options(x, y, molecule, *, band, temperature, resolution, instrument, isotopologues, fix,
             baseline, y_kind, joint, centrifugal, shape, lorentz_hwhm, convolve, start, free,
             meta, kind=None) -> dict:
    """Check every option of :func:`fit` (shared with :func:`restore_fit`)."""
    meta = dict(meta or {})
    detected = y_kind is None
    x, y, y_kind = check_data(x, y, y_kind if y_kind is not None else "absorbance")
    if detected:
        y_kind = guess_y_kind(y)
    if resolution is None:
        res = meta.get("resolution")
        if isinstance(res, (int, float)) and not isinstance(res, bool) and math.isfinite(res) \
                and res > 0:
            resolution = float(res)
    mol = check_molecule(molecule)
    check_kind(kind, mol)
    bands = check_bands(band)
    joint = bool(joint)
    if len(bands) > 1 and not joint:
        raise FitError("several bands need joint=True (one set of equilibrium constants)")
    if is_linear_polyatomic(mol):
        bands, isotopologues, joint = check_linear_options(mol, bands, isotopologues, joint)
    iso_names, ratios, free_ab = check_isotopologues(mol, isotopologues)
    inst = instrument_name(instrument)
    if baseline not in BASELINES:
        raise FitError(f"baseline must be one of {', '.join(repr(k) for k in BASELINES if k)} or "
                       f"None, got {baseline!r}")
    check_choice("centrifugal", centrifugal, ("shared", "separate", "none"))
    check_choice("shape", shape, ("doppler", "voigt"))
    check_choice("convolve", convolve, ("auto", "absorbance", "transmittance"))
    temperature = check_number("temperature", temperature, positive=True)
    start = check_mapping("start", start, None)
    fix = check_mapping("fix", fix, None)
    resolution = check_number("resolution", resolution)
    lorentz_hwhm = check_number("lorentz_hwhm", lorentz_hwhm)
    spec = {"band": [list(b) for b in bands], "temperature": temperature, "resolution": resolution,
            "instrument": inst, "isotopologues": isotopologues if not isinstance(isotopologues, tuple)
            else list(isotopologues), "fix": dict(fix or {}), "baseline": baseline,
            "y_kind": y_kind, "joint": joint, "centrifugal": centrifugal, "shape": shape,
            "lorentz_hwhm": lorentz_hwhm, "convolve": convolve, "start": dict(start or {}),
            "free": list(free or []), "molecule": mol.to_dict()}
    simulated = isinstance(meta.get("simulated"), Mapping)

    def model_options(domain: str) -> ModelOptions:
        return ModelOptions(bands=bands, joint=joint, centrifugal=centrifugal,
                            isotopologues=iso_names, abundance_ratios=ratios,
                            free_abundances=free_ab, shape=shape, instrument=inst, domain=domain,
                            baseline_degree=BASELINES[baseline], y_kind=y_kind)

    return {"x": x, "y": y, "mol": mol, "bands": bands, "spec": spec, "y_kind": y_kind,
            "start": start, "fix": fix,
            "resolution": resolution, "temperature": temperature, "lorentz_hwhm": lorentz_hwhm,
            "inst": inst, "simulated": simulated, "detected": detected,
            "model_options": model_options}


def fit_spectrum(spectrum: Spectrum, molecule, **options) -> BandFit:
    """:func:`fit` on a :class:`~widgetkit.Spectrum`: ``y_kind`` from the spectrum, and the
    resolution from ``meta["resolution"]`` (set by the readers from ``##RESOLUTION``)
    unless ``resolution=`` is given."""
    if not isinstance(spectrum, Spectrum):
        raise FitError(f"fit_spectrum needs a widgetkit Spectrum, got {type(spectrum).__name__}")
    opts = {"y_kind": spectrum.y_kind, "meta": spectrum.meta, **options}
    return fit(spectrum.x, spectrum.y, molecule, **opts)


def _second_look(run: Run, new_run: Callable[[], Run]) -> Run:
    """A fit that held ω_e x_e or D as implausible (the model's misfit) after scanning the
    resolution only once the coarse stages had run at the first guess of it is fitted again
    with the resolution scanned first; the lower χ² is kept and said. Measured: CO at 4 cm-1
    and 600 K, every 0.05 cm-1, T fixed, resolution not given: B 5.6 standard errors off
    ("doubtful") with ω_e x_e held at an implausible value; scanned first, 1.8."""
    res = run.params[run.fitter.index("resolution")]
    stuck = (run.held.get("resolution") == "at its bound"
             and not res.source.startswith(("given", "fixed")))
    if not ((run.scanned_late and run.held_implausible()) or stuck):
        return run
    if time.perf_counter() - run.t0 > 0.5 * run.max_time:
        # (the second fit gets what is left of the budget, so the whole keeps to it)
        run.messages.append("not looked again (a fit held a constant at an implausible value "
                            "or the resolution at its bound): over half of max_time is spent")
        return run
    alt = new_run()
    if stuck:
        # the resolution started from the line widths ran to its bound and was held back at
        # that start (measured: HCl at 0.01 cm-1 over 240,001 points, whose widths were read
        # on a binned copy: 0.15, held there with the Lorentzian width at 0, 30x the noise
        # left at the lines): scanned instead
        alt.params[alt.fitter.index("resolution")].source = "scanned"
    alt.stages(scan_first=True)
    c_first, c_alt = run.fitter.chisqr(), alt.fitter.chisqr()
    if c_alt < c_first:
        alt.messages.append(f"looked again: with the resolution scanned before the coarse "
                            f"stages chi-square is {c_alt:.4g} (first fit {c_first:.4g}): kept")
        return alt
    run.messages.append(f"looked again with the resolution scanned first: chi-square "
                        f"{c_alt:.4g}, not lower than {c_first:.4g}; the first fit is kept")
    return run


# ---------------------------------------------------------------------- start values
def _fallback_starts(x, y, y_kind, user_start, temperature) -> dict:
    a = _absorbance_like(y, y_kind)
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
