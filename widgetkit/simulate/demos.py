"""Ready-made demo spectra (for the quick-start notebook and examples).

The scenario is invented: the "widgetkit demo lab" measures gas cells of
hydrogen chloride and carbon monoxide on an imaginary FTIR spectrometer. All
data come from this package's own simulator and the handbook constants in
:data:`widgetkit.simulate.HANDBOOK`; nothing is a real measurement.

Safety note for anyone repeating such measurements for real: HCl is toxic and
corrosive and CO is a toxic, odourless gas; gas cells can be pressurised.
Fill and vent cells only with suitable ventilation, gas detection and training,
and follow local codes and the site's licensed practice.
"""

from __future__ import annotations

from collections.abc import Callable

from ..levels.molecule import Diatomic
from ..spectrum import Spectrum
from .handbook import HANDBOOK
from .spectra import rovibrational, vibrational

__all__ = ["DEMOS", "demo", "hcl_fundamental", "co_fundamental", "co_overview", "co_hot_bands"]


def hcl_fundamental(*, seed: int = 2026, y_kind: str = "transmittance") -> Spectrum:
    """HCl (natural 35Cl/37Cl) 1-0 band at 296 K, 2600–3100 cm⁻¹ every 0.01 cm⁻¹,
    0.05 cm⁻¹ instrument resolution, noise and a gently curved baseline."""
    return rovibrational(
        Diatomic("H", "Cl"), HANDBOOK["1H-35Cl"], x_range=(2600.0, 3100.0), step=0.01,
        temperature=296.0, strength=0.8, lorentz_hwhm=0.03, resolution=0.05, noise=0.003,
        baseline=(0.03, 0.01, 0.008), seed=seed, y_kind=y_kind,
        title="demo lab, cell A: HCl 1-0 at 296 K (simulated)",
    )


def co_fundamental(*, seed: int = 2027, y_kind: str = "absorbance") -> Spectrum:
    """CO (natural 12C/13C) 1-0 band at 296 K, 2000–2300 cm⁻¹ every 0.005 cm⁻¹."""
    return rovibrational(
        Diatomic("C", "O"), HANDBOOK["12C-16O"], x_range=(2000.0, 2300.0), step=0.005,
        temperature=296.0, strength=0.6, lorentz_hwhm=0.02, resolution=0.02, noise=0.002,
        baseline=(0.01, -0.005), seed=seed, y_kind=y_kind,
        title="demo lab, cell B: CO 1-0 at 296 K (simulated)",
    )


def co_overview(*, seed: int = 2028, y_kind: str = "absorbance") -> Spectrum:
    """CO fundamental and first two overtones (1-0, 2-0, 3-0) at 296 K,
    1900–6500 cm⁻¹ every 0.1 cm⁻¹ at 0.5 cm⁻¹ resolution; band strengths from
    the Morse oscillator with a linear dipole (mechanical anharmonicity)."""
    return vibrational(
        Diatomic("C", "O"), HANDBOOK["12C-16O"], bands=((1, 0), (2, 0), (3, 0)),
        x_range=(1900.0, 6500.0), step=0.1, temperature=296.0, strength=1.0,
        resolution=0.5, noise=1e-5, seed=seed, y_kind=y_kind,
        title="demo lab, long-path cell C: CO overview (simulated)",
    )


def co_hot_bands(*, seed: int = 2029, y_kind: str = "absorbance") -> Spectrum:
    """Hot CO at 1500 K: 1-0 with the hot band 2-1, and 2-0 with 3-1
    (1800–4500 cm⁻¹ every 0.1 cm⁻¹, 0.5 cm⁻¹ resolution)."""
    return vibrational(
        Diatomic("C", "O"), HANDBOOK["12C-16O"], bands=((1, 0), (2, 1), (2, 0), (3, 1)),
        x_range=(1800.0, 4500.0), step=0.1, temperature=1500.0, strength=1.0,
        resolution=0.5, noise=5e-5, seed=seed, y_kind=y_kind,
        title="demo lab, heated cell D: CO at 1500 K (simulated)",
    )


#: demo name -> function returning the Spectrum
DEMOS: dict[str, Callable[..., Spectrum]] = {
    "hcl_fundamental": hcl_fundamental,
    "co_fundamental": co_fundamental,
    "co_overview": co_overview,
    "co_hot_bands": co_hot_bands,
}


def demo(name: str, **kwargs) -> Spectrum:
    """The demo spectrum ``name`` (one of :data:`DEMOS`); ``seed=`` and ``y_kind=`` may be given."""
    from .lines import SimulationError

    if name not in DEMOS:
        raise SimulationError(f"unknown demo {name!r}; choose one of {', '.join(DEMOS)}")
    return DEMOS[name](**kwargs)
