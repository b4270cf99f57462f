"""widgetkit: Jupyter widgets and a replayable session model for vibrational
spectroscopy.

The headless API (no widget is imported by ``import widgetkit``)::

    import widgetkit as wk
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.to_absorbance()
    s.find_peaks(min_snr=8)
    s.fit_lines(shape="voigt")
    s.assign_band(wk.Diatomic("H", "Cl"))     # or wk.Linear("OCO"), kind="parallel"
    s.constants

Sub-packages ``wk.lines``, ``wk.levels``, ``wk.oscillator``, ``wk.simulate``,
``wk.bandmodel``, ``wk.processing``, ``wk.io`` and ``wk.demo`` (the shipped demo data:
``wk.demo.data_path("hcl_cell_296K.jdx")``) load on first use; the widgets live
in ``widgetkit.widgets`` and load only when that is imported.
"""

from __future__ import annotations

import importlib
from typing import Any

from .errors import (
    AssignmentError,
    FilePathError,
    FitError,
    OscillatorError,
    ProcessingError,
    SeriesError,
    SessionFormatError,
    SessionStateError,
    SimulationError,
    SpectrumFormatError,
    WidgetkitError,
)
from .spectrum import Spectrum

__version__ = "0.1.0"

__all__ = [
    "__version__",
    "Spectrum",
    "read_spectrum",
    "write_csv",
    "write_jcamp",
    "Session",
    "Step",
    "VerifyReport",
    "Diatomic",
    "Linear",
    "WidgetkitError",
    "SpectrumFormatError",
    "SessionFormatError",
    "SessionStateError",
    "ProcessingError",
    "OscillatorError",
    "SimulationError",
    "FitError",
    "AssignmentError",
    "FilePathError",
    "SeriesError",
    "Recipe",
    "run_series",
    "SeriesResult",
    "io",
    "processing",
    "lines",
    "levels",
    "oscillator",
    "simulate",
    "demo",
    "series",
    "bandmodel",
]

_SUBMODULES = {"io", "processing", "lines", "levels", "oscillator", "simulate", "bandmodel",
               "widgets", "session", "report", "cli", "demo", "series"}
_LAZY_NAMES = {
    "read_spectrum": ("io", "read_spectrum"),
    "write_csv": ("io", "write_csv"),
    "write_jcamp": ("io", "write_jcamp"),
    "Session": ("session", "Session"),
    "Step": ("session", "Step"),
    "VerifyReport": ("session", "VerifyReport"),
    "Diatomic": ("levels", "Diatomic"),
    "Linear": ("levels", "Linear"),
    "Recipe": ("session", "Recipe"),
    "run_series": ("series", "run_series"),
    "SeriesResult": ("series", "SeriesResult"),
}


def __getattr__(name: str) -> Any:
    if name in _SUBMODULES:
        return importlib.import_module(f".{name}", __name__)
    if name in _LAZY_NAMES:
        mod, attr = _LAZY_NAMES[name]
        value = getattr(importlib.import_module(f".{mod}", __name__), attr)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'widgetkit' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
