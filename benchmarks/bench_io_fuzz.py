"""Readers under fuzzing and on pathological input (run: ``python benchmarks/bench_io_fuzz.py``).

1. The mutations of ``tests/io/test_fuzz.py`` without hypothesis: 10,000 cases per reader
   (``--quick``: 1,000), each judged as in the tests (only SpectrumFormatError, no read an
   independent decoder disputes, both text passes alike). Reports failures, the median and
   the worst time of one case (read and judge), and how many took over 1 s, against the median as baseline.
2. Linear time: a header line of 16 kB, 160 kB and 1.6 MB of unclosed brackets and slashes
   (the input that made a backtracking label pattern quadratic), a first line beyond 64 KiB,
   and a JCAMP-DX label line of the same sizes; each time against reading the same file
   without the long line (baseline). Target: the time grows at most about tenfold per
   tenfold size (linear), and the 16 kB line costs under 10x the baseline.

The spectra are demo data (invented); the figures vary with the machine, the ratios matter.
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).parent
sys.path.insert(0, str(HERE.parent / "tests" / "io"))

from _timing import best_of  # noqa: E402


def fuzz(n: int) -> None:
    import random

    import test_fuzz as tf  # the test module: same corpus, mutations and judgement

    with tempfile.TemporaryDirectory() as tmp:
        scratch = Path(tmp)
        corpus = tf._corpus(scratch)
        rng = random.Random(2026)
        for kind in ("jcamp", "text"):
            times, failures = [], []
            for _ in range(n):
                pick, seed = rng.randrange(10_000), rng.randrange(2**32)
                t = time.perf_counter()
                try:
                    tf.fuzz_case(scratch, corpus, kind, pick, seed)
                except Exception as exc:  # report, do not stop
                    failures.append((pick, seed, type(exc).__name__, str(exc)[:120]))
                times.append(time.perf_counter() - t)
            med = statistics.median(times)
            print(f"[1] {kind}: {n:,} mutated files, {len(failures)} failure(s); one case "
                  f"(read and judge): median {med * 1e3:.2f} ms, worst {max(times) * 1e3:.0f} ms = "
                  f"{max(times) / med:.0f}x the median; {sum(t > 1.0 for t in times)} over 1 s")
            for f in failures[:5]:
                print("    failure (pick, seed, error):", f)


def linear(quick: bool) -> None:
    from widgetkit.io import read_spectrum

    rows = "".join(f"{1000 + k},{0.001 * k}\n" for k in range(200))
    sizes = (16_000, 160_000) if quick else (16_000, 160_000, 1_600_000)
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)

        def timed(name: str, text: str) -> float:
            p = folder / name
            p.write_text(text)
            return best_of(lambda: read_spectrum(p, y_kind="absorbance"), 3)

        base_text = timed("base.csv", "wavenumber (cm-1),absorbance\n" + rows)
        jdx_rows = "\n".join(f"{1000 + k} {k}" for k in range(200))
        jdx_head = ("##TITLE=t\n##XUNITS=1/CM\n##YUNITS=ABSORBANCE\n##FIRSTX=1000\n"
                    "##LASTX=1199\n##NPOINTS=200\n")
        jdx_tail = "##XYDATA=(X++(Y..Y))\n" + jdx_rows + "\n##END=\n"
        base_jdx = timed("base.jdx", jdx_head + jdx_tail)
        for what, make, base in (
            ("text header of brackets", lambda m: ("(" * (m // 2) + "[ /" * (m // 6))
             + ",absorbance\n" + rows, base_text),
            ("text first line (comment)", lambda m: "# " + "x" * m + "\n"
             + "wavenumber (cm-1),absorbance\n" + rows, base_text),
            ("JCAMP-DX label line", lambda m: jdx_head + "##$NOTE=" + "(" * m + "\n" + jdx_tail,
             base_jdx),
        ):
            times = [timed(f"l{m}", make(m)) for m in sizes]
            growth = ", ".join(f"{b / a:.1f}x" for a, b in zip(times, times[1:], strict=False))
            shown = ", ".join(f"{m // 1000} kB {t * 1e3:.1f} ms" for m, t in
                              zip(sizes, times, strict=True))
            print(f"[2] {what}: {shown}; growth per tenfold size {growth} (linear: about 10x); "
                  f"16 kB line = {times[0] / base:.1f}x the {base * 1e3:.1f} ms baseline "
                  "(target < 10x)")


def main() -> None:
    quick = "--quick" in sys.argv
    fuzz(1_000 if quick else 10_000)
    linear(quick)


if __name__ == "__main__":
    main()
