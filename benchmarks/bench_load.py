"""First reopening of a saved session in a fresh process (issue 12: "reopen in well under a
second").

Run: ``python benchmarks/bench_load.py`` (``--quick`` for a 10⁵-point session while
developing). Targets: a 10-step, 10⁶-point session under 1 s and a demo session (the
quick-start analysis of the shipped HCl file: absorbance, ALS baseline, peaks, Voigt fit,
assignment) under 0.3 s, both for ``Session.load`` in a fresh Python process after
``import widgetkit`` (the import of widgetkit itself is printed apart).

Baseline measured in the same run, in a fresh process too: reading the same file with the
standard ``json`` module and decoding its arrays with base64 and numpy (no checks, no
hashes, no state), i.e. the floor for getting that many bytes into memory in Python.
Each figure is the best of three fresh processes (least disturbed by other load); the CPU
time of the same call is printed beside the wall time (a busy machine stretches the latter).
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile

from bench_session import spectrum, ten_steps

import widgetkit as wk

_LOAD = """
import sys, time
t0 = time.perf_counter()
import widgetkit as wk
t1 = time.perf_counter()
if sys.argv[2] == "pandas-first":
    import pandas
t2 = time.perf_counter()
c2 = time.process_time()
s = wk.Session.load(sys.argv[1])
t3 = time.perf_counter()
c3 = time.process_time()
n = len(s.lines) + len(s.peaks)  # the tables a view shows first
t4 = time.perf_counter()
heavy = [m for m in ("lmfit", "scipy", "jsonschema") if m in sys.modules]
print(t1 - t0, t2 - t1, t3 - t2, t4 - t3, c3 - c2, ",".join(heavy) or "-")
"""

_FLOOR = """
import base64, json, sys, time
import numpy as np
t0 = time.perf_counter()
with open(sys.argv[1], "rb") as fh:
    doc = json.loads(fh.read())
for src in doc["sources"]:
    for a in src["data"].values():
        np.frombuffer(base64.b64decode(a["data"]), dtype="<f8")
print(time.perf_counter() - t0)
"""


def _fresh(code: str, *args: str, env: dict) -> list[str]:
    out = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                         check=True, env=env)
    return out.stdout.split()


def _best(code: str, *args: str, env: dict, key: int = 0, repeat: int = 3) -> list:
    """The run with the smallest ``key`` figure of ``repeat`` fresh processes (after one
    untimed run that writes the compiled modules, as an installed package has them)."""
    _fresh(code, *args, env=env)
    runs = [_fresh(code, *args, env=env) for _ in range(repeat)]
    best = min(runs, key=lambda r: float(r[key]))
    return [float(v) if v[0].isdigit() else v for v in best]


def demo() -> wk.Session:
    """The quick-start analysis of the shipped HCl cell (demo data)."""
    s = wk.Session.from_file(wk.demo.data_path("hcl_cell_296K.jdx"))
    s.to_absorbance()
    s.subtract_baseline("als", lam=1e6, p=0.01)
    s.find_peaks(min_snr=10)
    s.fit_lines(shape="voigt", shared_width=True, baseline="linear")
    s.assign_band(wk.Diatomic("H", "Cl"), temperature=296)
    return s


def main() -> None:
    n = 100_000 if "--quick" in sys.argv else 1_000_000
    cases = [(f"10 steps, {n:,} points (bench_session.py)", ten_steps(spectrum(n)), 1.0),
             ("demo session", demo(), 0.3)]
    with tempfile.TemporaryDirectory() as tmp:
        env = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
        env["PYTHONPYCACHEPREFIX"] = os.path.join(tmp, "pycache")
        for name, session, target in cases:
            path = os.path.join(tmp, "s.json")
            session.save(path)
            size = os.path.getsize(path)
            t_import, _, t_load, t_view, c_load, heavy = _best(_LOAD, path, "cold", env=env, key=2)
            _, t_pandas, t_warm, _, c_warm, _ = _best(_LOAD, path, "pandas-first", env=env, key=2)
            (t_floor,) = _best(_FLOOR, path, env=env)
            steps = len(session.history)
            print(f"{name}: {steps} steps, file {size / 1e6:.1f} MB")
            print(f"  first Session.load {t_load:6.3f} s wall, {c_load:.3f} s CPU (target < "
                  f"{target:g} s), of which importing pandas about {t_pandas:.3f} s; with pandas "
                  f"already imported {t_warm:.3f} s wall, {c_warm:.3f} s CPU")
            print(f"  {t_warm / t_floor:5.1f}x the floor of json + base64 on the same file "
                  f"({t_floor:.3f} s); lines and peaks then {t_view * 1e3:.1f} ms; import "
                  f"widgetkit {t_import:.3f} s; heavy modules loaded: {heavy}")


if __name__ == "__main__":
    main()
