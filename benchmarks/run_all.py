"""Run every benchmark in this folder, one after the other (``make bench``).

Each prints its own figures and ratios against a baseline measured in the same run.
Extra arguments are passed to ``bench_lines.py`` (for example ``--full``).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).parent


def main() -> int:
    failed = []
    for script in sorted(HERE.glob("bench_*.py")):
        print(f"\n=== {script.name} ===", flush=True)
        args = sys.argv[1:] if script.name == "bench_lines.py" else []
        if subprocess.call([sys.executable, str(script), *args]) != 0:
            failed.append(script.name)
    if failed:
        print(f"\nfailed: {', '.join(failed)}")
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
