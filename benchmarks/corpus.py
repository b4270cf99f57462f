"""A seeded stress corpus of simulated diatomic spectra, and a runner of the default analysis.

**The spectra.** Every case is drawn from ``numpy.random.default_rng((seed, index))`` and
rendered by our own simulator (:func:`widgetkit.simulate.rovibrational`) from published
constants of six diatomics (:data:`MOLECULES`, each with its source); the isotopologues
follow from the natural isotopes (H³⁵Cl/H³⁷Cl, H⁷⁹Br/H⁸¹Br, ¹²CO/¹³CO). On top of the band
the generator adds, each with its own probability:

* sampling 0.005–2 cm⁻¹ (log-uniform), instrument resolution 1.5–4 samples when the lines
  would otherwise be narrower than that;
* a signal-to-noise ratio 10–5000 (log-uniform; noise σ = strongest line / SNR);
* a polynomial baseline (degree 2–3) and/or an interference fringe (a sinusoid of period
  20–200 line widths);
* impurity lines (1–5 lines of another width at random places);
* saturated lines (peak absorbance 2.5–5, with 0.1–1 % stray light capping the recorded
  absorbance);
* digitisation (y rounded to 8–12 bits over its range);
* transmittance or absorbance, fundamental, overtone or a hot band with the fundamental.

Spectra longer than ``max_points`` keep a random part of the band, so that the corpus runs
in minutes. A case is named by ``(index, seed, max_points)``: the crop takes a draw of its
own, so the same index with another ``max_points`` may differ beyond the crop. Everything
is invented data for self-consistency: the truth is the simulator's
own line list.

**The truth to meet.** A line counts when its height above the baseline, in the data's own
units (absorbance, or the depth of a transmittance dip), is at least 6 noise σ (σ including
the rounding of digitised data), when no other line (band, isotopologue or impurity) of at
least a tenth of its height lies within twice the larger of their FWHM, and when it is at
least two FWHM from the ends of the spectrum. Closer lines are one feature at the spectrum's
resolution, or pull its apparent centre by more than its error (a hot-band line of a fifth
of the height one FWHM away moves the top by about a tenth of a FWHM), and cannot be asked of
a peak search.

**The default analysis** (:func:`analyse`): a session on the spectrum; transmittance is
converted to absorbance (where that is refused because noise on saturated lines reaches
T ≤ 0, the transmittance dips are analysed as they are); ``find_peaks()``;
``fit_lines()``. Each case runs in a child process with a wall-time budget.

**Outcomes** (:func:`classify`): *success* when ≥ 95 % of the counted lines have a fitted
line within 4 of its position standard errors; *refusal* when a documented widgetkit error
(:class:`widgetkit.errors.WidgetkitError`) ended the analysis; *failure* otherwise: wrong
lines, over the budget (a hang), or any other exception.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

#: constants of the most abundant isotopologue (cm⁻¹, r_e in Å) and their source.
#: Huber and Herzberg, *Constants of Diatomic Molecules* (Van Nostrand Reinhold, 1979),
#: ground states; values from memory (HCl and CO as in widgetkit.simulate.HANDBOOK).
#: NO (X ²Π) is rendered as a ¹Σ band: its Λ-doubling and spin–orbit structure are not
#: modelled, which does not matter for a peak search.
MOLECULES: dict[str, dict] = {
    "HCl": {"atoms": ("H", "Cl"), "key": "1H-35Cl", "source": "Huber & Herzberg 1979 (memory)"},
    "CO": {"atoms": ("C", "O"), "key": "12C-16O", "source": "Huber & Herzberg 1979 (memory)"},
    "HBr": {"atoms": ("H", "Br"), "source": "Huber & Herzberg 1979 (memory)",
            "constants": {"omega_e": 2648.975, "omega_e_x_e": 45.218, "B_e": 8.46488,
                          "alpha_e": 0.23328, "D_e": 3.457e-4, "r_e": 1.41444}},
    "HF": {"atoms": ("H", "F"), "source": "Huber & Herzberg 1979 (memory)",
           "constants": {"omega_e": 4138.32, "omega_e_x_e": 89.88, "B_e": 20.9557,
                         "alpha_e": 0.798, "D_e": 2.151e-3, "r_e": 0.91681}},
    "NO": {"atoms": ("N", "O"), "source": "Huber & Herzberg 1979 (memory)",
           "constants": {"omega_e": 1904.20, "omega_e_x_e": 14.075, "B_e": 1.67195,
                         "alpha_e": 0.0171, "D_e": 0.54e-6, "r_e": 1.15077}},
    "DCl": {"atoms": ("D", "Cl"), "source": "Huber & Herzberg 1979 (memory)",
            "constants": {"omega_e": 2145.163, "omega_e_x_e": 27.1825, "B_e": 5.448794,
                          "alpha_e": 0.113291, "D_e": 1.39e-4, "r_e": 1.27458}},
}

#: success: at least this fraction of the counted lines matched
SUCCESS_FRACTION = 0.95
#: a match lies within this many position standard errors
MATCH_SIGMAS = 4.0
#: lines at least this many noise σ high are counted
COUNT_SIGMAS = 6.0
#: default wall-time budget of one analysis, seconds
BUDGET = 10.0


@dataclass(frozen=True)
class Case:
    """One corpus spectrum: every parameter that renders it (JSON-able)."""

    index: int
    seed: int
    molecule: str
    bands: tuple
    temperature: float
    step: float
    x_range: tuple
    resolution: float
    lorentz_hwhm: float
    strength: float
    snr: float
    y_kind: str
    poly: tuple = ()
    fringe: tuple = ()          # (amplitude in absorbance, period cm-1, phase)
    impurities: tuple = ()      # ((position, height in absorbance, fwhm), ...)
    saturation: float = 0.0     # absorbance ceiling from stray light (0: none)
    bits: int = 0               # digitisation (0: none)

    def label(self) -> str:
        tags = [self.molecule, "+".join(f"{a}-{b}" for a, b in self.bands), self.y_kind[:5],
                f"step {self.step:.3g}", f"SNR {self.snr:.0f}"]
        tags += [t for t, on in (("poly", self.poly), ("fringe", self.fringe),
                                 ("impurities", self.impurities), ("saturated", self.saturation),
                                 (f"{self.bits}-bit", self.bits)) if on]
        return ", ".join(tags)


@dataclass
class Rendered:
    """A case's spectrum and its truth."""

    spectrum: object
    sigma: float                 # noise σ in the data's units (with digitisation)
    positions: np.ndarray        # every band line inside the range
    heights: np.ndarray          # in the data's units, above the baseline
    fwhm: np.ndarray
    counted: np.ndarray          # bool: lines the analysis must find
    impurity_positions: np.ndarray = field(default_factory=lambda: np.zeros(0))


def _molecule(name: str):
    import widgetkit as wk
    from widgetkit.simulate import HANDBOOK

    m = MOLECULES[name]
    consts = m.get("constants") or HANDBOOK[m["key"]]
    return wk.Diatomic(*m["atoms"]), dict(consts)


def _loguniform(rng, lo, hi):
    return float(math.exp(rng.uniform(math.log(lo), math.log(hi))))


def _band_span(name: str, bands, temperature: float) -> tuple[float, float]:
    from widgetkit.simulate import line_list

    mol, consts = _molecule(name)
    lines = line_list(mol, consts, bands=bands, temperature=temperature)
    strong = lines[lines["intensity"] >= 1e-3]
    return float(strong["position"].min()), float(strong["position"].max())


def make_case(index: int, seed: int = 2026, max_points: int = 20_000) -> Case:
    """Draw case ``index`` of the corpus of ``seed`` (module docstring)."""
    rng = np.random.default_rng((seed, index))
    name = list(MOLECULES)[int(rng.integers(len(MOLECULES)))]
    kind = rng.choice(["fundamental", "fundamental", "fundamental", "overtone", "hot"])
    bands = {"fundamental": ((1, 0),), "overtone": ((2, 0),), "hot": ((1, 0), (2, 1))}[kind]
    temperature = float(rng.uniform(700, 1200) if kind == "hot" else rng.uniform(200, 400))
    step = _loguniform(rng, 0.005, 2.0)
    lorentz = _loguniform(rng, 0.002, 0.2)
    # lines narrower than the sampling are smoothed by an instrument of 1.5-4 samples
    resolution = float(step * rng.uniform(1.5, 4.0)) if 2 * lorentz < 3 * step else 0.0
    lo, hi = _band_span(name, bands, temperature)
    pad = 10.0 + 20.0 * max(resolution, 2 * lorentz)
    lo, hi = lo - pad, hi + pad
    width = max_points * step
    if hi - lo > width:
        lo = float(rng.uniform(lo, hi - width))
        hi = lo + width
    saturated = rng.random() < 0.15
    strength = float(rng.uniform(2.5, 5.0) if saturated else _loguniform(rng, 0.05, 1.5))
    y_kind = "transmittance" if rng.random() < 0.5 else "absorbance"
    poly = fringe = impurities = ()
    if rng.random() < 0.5:
        deg = int(rng.integers(2, 4))
        poly = tuple(float(v) for v in rng.normal(0.0, 0.05 * min(strength, 1.5), deg + 1))
    if rng.random() < 0.35:
        line_w = max(resolution, 2 * lorentz, step)
        fringe = (float(rng.uniform(0.01, 0.1) * min(strength, 1.0)),
                  float(line_w * _loguniform(rng, 20, 200)), float(rng.uniform(0, 2 * math.pi)))
    if rng.random() < 0.3:
        k = int(rng.integers(1, 6))
        w = max(resolution, 2 * lorentz, 2 * step) * rng.uniform(1.0, 3.0, k)
        impurities = tuple((float(p), float(h), float(f)) for p, h, f in zip(
            rng.uniform(lo, hi, k), rng.uniform(0.05, 0.5, k) * min(strength, 1.5), w,
            strict=True))
    return Case(index=index, seed=seed, molecule=name, bands=bands, temperature=temperature,
                step=step, x_range=(float(lo), float(hi)), resolution=resolution,
                lorentz_hwhm=lorentz, strength=strength, snr=_loguniform(rng, 10, 5000),
                y_kind=y_kind, poly=poly, fringe=fringe, impurities=impurities,
                saturation=float(rng.uniform(2.0, 3.0)) if saturated else 0.0,
                bits=int(rng.choice([8, 10, 12])) if rng.random() < 0.2 else 0)


def corpus(count: int = 240, seed: int = 2026, max_points: int = 20_000) -> list[Case]:
    """The first ``count`` cases of the corpus of ``seed``."""
    return [make_case(i, seed, max_points) for i in range(count)]


def clean_twin(case: Case) -> Case:
    """The same band on the same grid, clean: absorbance, SNR 1000, no baseline, fringe,
    impurity, saturation or digitisation (the reference for timing)."""
    return Case(index=case.index, seed=case.seed, molecule=case.molecule, bands=case.bands,
                temperature=case.temperature, step=case.step, x_range=case.x_range,
                resolution=case.resolution, lorentz_hwhm=case.lorentz_hwhm,
                strength=min(case.strength, 1.0), snr=1000.0, y_kind="absorbance")



def _data_height(h, base, stray: float, y_kind: str):
    """Height of a line of peak absorbance ``h`` on absorbance ``base`` in the data's units
    (absorbance, or the depth of a transmittance dip), with stray light ``stray``."""
    t_base = (10.0 ** (-base) + stray) / (1.0 + stray)
    t_line = (10.0 ** (-(base + h)) + stray) / (1.0 + stray)
    return t_base - t_line if y_kind == "transmittance" else np.log10(t_base / t_line)


def _truth_lines(case: Case, mol, consts):
    """Band lines inside the range: positions, peak absorbance, FWHM."""
    from scipy.special import voigt_profile

    from widgetkit.simulate import doppler_sigma, line_list, voigt_fwhm

    lines = line_list(mol, consts, bands=case.bands, temperature=case.temperature)
    pos = lines["position"].to_numpy()
    sig = np.hypot(doppler_sigma(pos, case.temperature, lines["mass"].to_numpy()),
                   case.resolution / (2.0 * math.sqrt(2.0 * math.log(2.0))))
    peak = lines["intensity"].to_numpy() * voigt_profile(0.0, sig, case.lorentz_hwhm)
    h = case.strength * peak / peak.max()
    fv = voigt_fwhm(sig, case.lorentz_hwhm)
    inside = (pos >= case.x_range[0]) & (pos <= case.x_range[1])
    return pos[inside], h[inside], fv[inside]


def _counted(x, pos, hd, fv, imp_pos, imp_hd, imp_fv, sigma) -> np.ndarray:
    """Lines at least 6 σ high, isolated, away from the ends (module docstring)."""
    all_pos = np.concatenate([pos, imp_pos])
    all_h = np.concatenate([hd, imp_hd])
    all_fv = np.concatenate([fv, imp_fv])
    ok = (hd >= COUNT_SIGMAS * sigma) & (pos - x[0] >= 2 * fv) & (x[-1] - pos >= 2 * fv)
    for i in np.flatnonzero(ok):
        near = np.abs(all_pos - pos[i]) < 2.0 * np.maximum(all_fv, fv[i])
        near[i] = False
        if np.any(near & (all_h >= 0.1 * hd[i])):
            ok[i] = False
    return ok


def render(case: Case) -> Rendered:
    """The spectrum of ``case`` (simulated band, baseline, fringe, impurities, saturation,
    noise, digitisation) and its truth."""
    from widgetkit.simulate import rovibrational
    from widgetkit.spectrum import Spectrum

    mol, consts = _molecule(case.molecule)
    band = rovibrational(mol, consts, x_range=case.x_range, step=case.step, bands=case.bands,
                         temperature=case.temperature, strength=case.strength,
                         lorentz_hwhm=case.lorentz_hwhm, resolution=case.resolution)
    x = band.x
    mid, half = 0.5 * (x[0] + x[-1]), 0.5 * (x[-1] - x[0])
    base = np.zeros_like(x)
    if case.poly:
        base += np.polynomial.polynomial.polyval((x - mid) / half, case.poly)
    if case.fringe:
        amp, period, phase = case.fringe
        base += amp * np.sin(2.0 * math.pi * x / period + phase)
    imp = np.zeros_like(x)
    imp_pos, imp_h, imp_fv = (np.array([v[k] for v in case.impurities], dtype=float)
                              for k in range(3))
    for p, h, f in case.impurities:
        imp += h * (0.5 * f) ** 2 / ((x - p) ** 2 + (0.5 * f) ** 2)
    stray = 10.0 ** (-case.saturation) if case.saturation else 0.0
    t = (10.0 ** (-(band.y + imp + base)) + stray) / (1.0 + stray)
    clean = t if case.y_kind == "transmittance" else -np.log10(t)
    pos, h, fv = _truth_lines(case, mol, consts)
    b_at = np.interp(pos, x, base)
    hd = _data_height(h, b_at, stray, case.y_kind)
    imp_hd = _data_height(imp_h, np.interp(imp_pos, x, base), stray, case.y_kind)
    sigma = float(max(np.max(hd, initial=0.0), np.max(imp_hd, initial=0.0))) / case.snr
    rng = np.random.default_rng((case.seed, case.index, 1))
    y = clean + rng.normal(0.0, sigma, x.size)
    if case.bits:
        q = float(np.ptp(y)) / 2**case.bits
        y = np.round(y / q) * q
        sigma = math.hypot(sigma, q / math.sqrt(12.0))
    meta = {"title": f"corpus case {case.index}: {case.label()}"}
    spectrum = Spectrum(x, y, y_kind=case.y_kind, meta=meta)
    counted = _counted(x, pos, hd, fv, imp_pos, imp_hd, imp_fv, sigma)
    return Rendered(spectrum, sigma, pos, hd, fv, counted, imp_pos)
