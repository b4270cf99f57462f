"""Spectrum processing: crop, absorbance/transmittance, baselines, noise,
peaks and display decimation.

All functions are pure: they take a :class:`~widgetkit.spectrum.Spectrum` or
plain arrays and return new values, record nothing and print nothing. The
session (:mod:`widgetkit.session`) calls them and records each call as a step.

Modules: :mod:`.transform` (crop, to_absorbance, to_transmittance, to_raman_shift),
:mod:`.baseline` (baseline_poly, baseline_als, subtract_baseline),
:mod:`.noise` (measure_noise, estimate_noise: the one noise σ),
:mod:`.envelope` (local baseline, typical width), :mod:`.fringe` (find_fringe, Fringe:
interference fringes of the baseline), :mod:`.threshold`
(default_threshold: the false-alarm rule), :mod:`.peak_data` (peak_context: what a
search measures first), :mod:`.peaks` (search_peaks, find_peaks), :mod:`.peak_edit`
(nearest_maximum, peak_row, peak_table: peaks placed by hand), :mod:`.decimate` (decimate_minmax).

The names below load on first use (reopening a session converts to absorbance or
crops without importing the baseline, noise and peak modules, which need scipy).
"""

from __future__ import annotations

import importlib
from typing import Any

__all__ = [
    "ProcessingError",
    "crop",
    "to_absorbance",
    "to_transmittance",
    "to_raman_shift",
    "excitation_wavenumber",
    "MAX_TRANSMITTANCE",
    "baseline_poly",
    "baseline_als",
    "baseline_options",
    "second_difference_penalty",
    "subtract_baseline",
    "BASELINE_METHODS",
    "estimate_noise",
    "measure_noise",
    "NoiseEstimate",
    "line_free_mask",
    "local_baseline",
    "typical_width",
    "find_fringe",
    "Fringe",
    "find_peaks",
    "search_peaks",
    "peak_context",
    "PeakContext",
    "PeakSearch",
    "default_threshold",
    "nearest_maximum",
    "peak_row",
    "peak_table",
    "refine_parabola",
    "PEAK_COLUMNS",
    "decimate_minmax",
]

#: public name -> the module (in this package) that defines it
_WHERE = {
    "ProcessingError": "_common", "decimate_minmax": "decimate",
    **{name: "baseline" for name in ("BASELINE_METHODS", "baseline_als", "baseline_options",
                                     "baseline_poly", "second_difference_penalty",
                                     "subtract_baseline")},
    **{name: "envelope" for name in ("local_baseline", "typical_width")},
    **{name: "fringe" for name in ("Fringe", "find_fringe")},
    **{name: "noise" for name in ("NoiseEstimate", "estimate_noise", "line_free_mask",
                                  "measure_noise")},
    **{name: "peak_edit" for name in ("nearest_maximum", "peak_row", "peak_table")},
    **{name: "peaks" for name in ("PEAK_COLUMNS", "PeakSearch", "find_peaks",
                                  "refine_parabola", "search_peaks")},
    **{name: "peak_data" for name in ("PeakContext", "peak_context")},
    "default_threshold": "threshold",
    **{name: "transform" for name in ("MAX_TRANSMITTANCE", "crop", "excitation_wavenumber",
                                      "to_absorbance", "to_raman_shift", "to_transmittance")},
}


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        value = getattr(importlib.import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'widgetkit.processing' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))
