"""The stress corpus (:mod:`corpus`): success rate and time distribution of the default analysis.

Run: ``python benchmarks/bench_corpus.py [--count 240] [--seed 2026] [--max-points 20000]
[--budget 30] [--json results.json]``

Every case is a simulated diatomic band with its own sampling, noise, baseline, fringe,
impurity lines, saturation, digitisation and y units (see :mod:`corpus`); the default
analysis is ``find_peaks()`` then ``fit_lines()`` after converting transmittance to
absorbance, each case in a child process with a wall-time budget. Printed:

* the outcomes (success, clear refusal, failure by kind: wrong lines, over the budget,
  undocumented exception) and the success rate;
* the time distribution of the analyses that finished (median, 95th percentile, maximum,
  how many over 10 s), as wall time and as processor time (fair on a shared machine);
* the slowest finished case against its clean twin (the same band on the same grid, clean,
  absorbance) measured in the same run: the ratio the issue asks to stay within 5x;
* one line per case that did not succeed, with a command that reproduces it.

Invented data (our simulator, published constants): self-consistency only.
"""

from __future__ import annotations

import argparse
import json
import sys
from dataclasses import asdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).parent))

from corpus import clean_twin, corpus  # noqa: E402
from corpus_run import run_case, run_corpus, summary  # noqa: E402


def _progress(i: int, n: int, r) -> None:
    t = f"{r.t_total:6.2f} s" if r.t_total == r.t_total else "   --   "
    print(f"  [{i:3d}/{n}] case {r.index:3d} {r.outcome:8s} {t}  {r.n_points:6d} points, "
          f"{r.n_matched}/{r.n_counted} lines  {r.label}", flush=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--count", type=int, default=240)
    ap.add_argument("--seed", type=int, default=2026)
    ap.add_argument("--max-points", type=int, default=20_000)
    ap.add_argument("--budget", type=float, default=30.0,
                    help="wall seconds before an analysis counts as hung (the issue: no fit "
                         "over 10 s; the margin is for a loaded machine, and the processor "
                         "time is reported beside the wall time)")
    ap.add_argument("--json", help="write every case's result here")
    ap.add_argument("--quiet", action="store_true", help="no line per case")
    a = ap.parse_args(argv)
    cases = corpus(a.count, a.seed, a.max_points)
    print(f"stress corpus: {a.count} cases, seed {a.seed}, at most {a.max_points} points, "
          f"budget {a.budget:g} s per analysis", flush=True)
    sink = open(a.json + ".partial", "w") if a.json else None  # noqa: SIM115

    def progress(i, n, r):
        if not a.quiet:
            _progress(i, n, r)
        if sink is not None:  # one JSON line per case as it ends: a stopped run keeps them
            sink.write(json.dumps(asdict(r)) + "\n")
            sink.flush()

    results = run_corpus(cases, a.budget, progress)
    if sink is not None:
        sink.close()
    s = summary(results)
    print(f"\noutcomes: {s['success']} success, {s['refusal']} clear refusals, "
          f"{s['failure']} failures of {s['cases']}: success rate {100 * s['success_rate']:.1f} %")
    if s["unchecked"]:
        print(f"  of the successes, {s['unchecked']} had no line that could be counted "
              "(every line blended at that resolution): nothing to check but the end")
    for k, v in sorted(s["reasons"].items()):
        print(f"  {k}: {v}")
    if s["time"]:
        for name, key in (("wall time", "time"), ("processor time", "cpu")):
            t = s[key]
            print(f"{name} of finished analyses: median {t['median']:.2f} s, "
                  f"95 % {t['p95']:.2f} s, max {t['max']:.2f} s, {t['over_10s']} over 10 s")
        slow = max((r for r in results if r.t_total == r.t_total), key=lambda r: r.t_total)
        twin = run_case(clean_twin(cases[slow.index]), a.budget)
        if twin.t_total == twin.t_total:
            print(f"slowest: case {slow.index} ({slow.n_lines} lines) {slow.t_total:.2f} s "
                  f"({slow.cpu_total:.2f} s processor); its clean twin ({twin.n_lines} lines) "
                  f"{twin.t_total:.2f} s ({twin.cpu_total:.2f} s processor): ratio "
                  f"{slow.t_total / twin.t_total:.2f}x wall, "
                  f"{slow.cpu_total / twin.cpu_total:.2f}x processor")
        else:
            print(f"slowest: case {slow.index} {slow.t_total:.2f} s; its clean twin did not "
                  f"finish ({twin.outcome}, {twin.reason})")
    print("\nnot successful (reproduce with: python benchmarks/bench_corpus.py, or "
          "corpus_run.reproduction):")
    for r in results:
        if r.outcome != "success":
            print(f"  case {r.index:3d} {r.outcome}/{r.reason}: {r.label}; "
                  f"{r.detail.splitlines()[0][:160] if r.detail else ''}")
    if a.json:
        Path(a.json).write_text(json.dumps({"args": vars(a), "summary": s,
                                            "results": [asdict(r) for r in results]}, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
