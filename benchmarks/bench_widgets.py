"""Benchmark of the notebook panels on a 1,000,000-point spectrum (no kernel, no browser).

Run: ``python benchmarks/bench_widgets.py [n_points]``

Measures, in Python, the time from a user action to the updated marks of
every panel of an :class:`~widgetkit.widgets.AnalysisApp`, and the bytes the
widgets send for it (JSON plus binary buffers, captured at the comm):

* add a peak by a click (the bqplot "add" message), including the session step;
* zoom and pan (the x scale's ``min``/``max`` as the browser sets them);

against the named baseline "undecimated": sending the full float64 arrays of
the one spectrum curve to its Lines mark (what a plot without decimation does
on every update). Targets: under 50 ms and under 100 kB per update.

The spectrum is demo data from our own simulator (widgetkit.simulate, the
1-0 band of HCl from handbook constants, an invented measurement).
"""

from __future__ import annotations

import json
import sys
import time
import warnings

warnings.filterwarnings("ignore", category=DeprecationWarning)

import comm  # noqa: E402
import numpy as np  # noqa: E402

import widgetkit as wk  # noqa: E402
from widgetkit.widgets import AnalysisApp  # noqa: E402

_messages: list[tuple[str, dict, list]] = []


def _publish(self, msg_type, data=None, metadata=None, buffers=None, **keys):
    _messages.append((msg_type, data or {}, list(buffers or [])))


comm.DummyComm.publish_msg = _publish  # record what would go to the browser


def _bytes() -> int:
    total = 0
    for _, data, bufs in _messages:
        total += len(json.dumps(data, default=lambda o: None).encode())
        total += sum(memoryview(b).nbytes for b in bufs)
    return total


def _measure(action, repeat: int = 5) -> tuple[float, int]:
    """Best wall time (s) and the bytes sent by one action."""
    best, sent = float("inf"), 0
    for i in range(repeat):
        _messages.clear()
        t0 = time.perf_counter()
        action(i)
        dt = time.perf_counter() - t0
        if dt < best:
            best, sent = dt, _bytes()
    return best, sent


def _front_end_update(widget, **arrays) -> None:
    wire, buffers, paths = {}, [], []
    for name, value in arrays.items():
        if isinstance(value, np.ndarray):
            wire[name] = {"dtype": str(value.dtype), "shape": list(value.shape), "type": None}
            paths.append([name, "value"])
            buffers.append(memoryview(np.ascontiguousarray(value).tobytes()))
        else:
            wire[name] = value
    widget._handle_msg({"content": {"data": {"method": "update", "state": wire,
                                             "buffer_paths": paths}}, "buffers": buffers})


def main(n: int = 1_000_000) -> None:
    hcl = wk.Diatomic("1H", "35Cl")
    lo, hi = 2600.0, 3100.0
    t0 = time.perf_counter()
    sp = wk.simulate.rovibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"],
                                   x=np.linspace(lo, hi, n), seed=5, noise=0.002,
                                   lorentz_hwhm=0.2)
    t_sim = time.perf_counter() - t0
    session = wk.Session(sp)
    session.find_peaks(min_snr=20.0)
    t0 = time.perf_counter()
    app = AnalysisApp(session)
    t_build = time.perf_counter() - t0
    peaks = app.peaks_panel
    print(f"spectrum: {n:,} points (simulated in {t_sim:.2f} s); {len(session.peaks)} peaks; "
          f"app built in {t_build:.2f} s")

    rng = np.random.default_rng(0)
    clicks = rng.uniform(2700.0, 3000.0, 10)

    def add_peak(i):
        x = np.append(np.asarray(peaks.markers.x, float), clicks[i])
        y = np.append(np.asarray(peaks.markers.y, float), 0.1)
        _front_end_update(peaks.markers, x=x, y=y)

    bare = wk.Session(sp)  # the same step on a session no panel listens to
    bare.find_peaks(min_snr=20.0)

    def add_peak_session_only(i):
        bare.add_peak(float(clicks[i]))

    windows = [(2800.0 + 10 * i, 2900.0 + 10 * i) for i in range(10)]

    def zoom(i):
        a, b = windows[i]
        _front_end_update(peaks.plot.x_scale, min=a, max=b)

    def zoom_out(i):
        _front_end_update(peaks.plot.x_scale, min=lo + i, max=hi - i)

    def whole_range(i):  # the "Whole range" button after a zoom: a window seen before
        _front_end_update(peaks.plot.x_scale, min=2800.0, max=2900.0)
        _messages.clear()
        t0 = time.perf_counter()
        peaks.plot.reset_window()
        whole.append((time.perf_counter() - t0, _bytes()))

    whole: list[tuple[float, int]] = []
    curve = peaks.plot.curve("data")

    def undecimated(i):  # new content every time, so both arrays are really sent
        with curve.hold_sync():
            curve.x = sp.x + 1e-9 * (i + 1)
            curve.y = sp.y + 1e-12 * (i + 1)

    rows = [
        ("add a peak (click; session step + all panels)", _measure(add_peak)),
        ("  of which the session step (no panels)", _measure(add_peak_session_only)),
        ("zoom to 100 cm-1 (re-decimate)", _measure(zoom)),
        ("zoom out to a new wide window", _measure(zoom_out)),
    ]
    _measure(whole_range)
    rows.append(("'Whole range' again (decimation cached)", min(whole)))
    base_t, base_b = _measure(undecimated, repeat=3)
    render = rows[0][1][0] - rows[1][1][0]
    print(f"\n{'action':50s} {'time / ms':>10s} {'sent / kB':>10s} {'time ratio':>11s} "
          f"{'bytes ratio':>12s}")
    print(f"{'baseline: undecimated 1 curve (full float64)':50s} {base_t * 1e3:10.1f} "
          f"{base_b / 1e3:10.1f} {'1':>11s} {'1':>12s}")
    for name, (t, b) in rows:
        ratio = f"{base_b / b:12.0f}" if b else f"{'–':>12s}"
        print(f"{name:50s} {t * 1e3:10.1f} {b / 1e3:10.1f} {base_t / t:11.2f} {ratio}")
    print(f"{'  so the panels take (difference)':50s} {render * 1e3:10.1f}")
    print("\nratios: baseline / ours (> 1: ours is faster / smaller). Targets: < 50 ms, < 100 kB.")
    print("The baseline's time is Python-side only; in the browser a 1,000,000-point mark "
          "takes seconds to repaint, a 2,000-point one tens of ms (issue 6).")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000)
