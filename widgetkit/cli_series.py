"""The ``series`` sub-command of ``widgetkit``, and ``widgetkit verify`` on a series file.

``widgetkit series RECIPE SOURCES... --out DIR [--workers N] [--scheduler ADDRESS]
[--variable SPEC] [--unit UNIT] [--no-warm-start] [--quiet]``
    Run a recipe (a file from ``Recipe.save``, or a saved session, whose recipe is used)
    over spectrum files, folders or glob patterns; writes ``DIR/series.json``,
    ``DIR/sessions/``, ``DIR/constants.csv`` and ``DIR/recipe.json``. Exit 0 when every
    spectrum was analysed (ok or doubtful), 1 when some failed (each row says why), 2 when
    the run cannot start (bad recipe, no spectra, bad option), 130 when interrupted
    (run the same command again to finish: finished spectra are skipped).

``widgetkit verify SERIES_FILE [--workers N] [--scheduler ADDRESS]``
    Replay every session of a series (in parallel) and compare each with its record and
    with the series file; exit 0 when all reproduce, 1 when some do not (printed per
    spectrum), 2 when the series file cannot be read.
"""

from __future__ import annotations

import argparse

from ._cli_common import err as _err
from ._cli_common import read_or_fail

__all__ = ["register_series", "verify_series", "COMMANDS"]

_HELP = (
    "Run a recipe (saved with Recipe.save, or a saved session whose steps are used) over "
    "spectrum files, folders or glob patterns, each spectrum in its own session under "
    "--out. Exit status 0 when every spectrum was analysed (ok or doubtful), 1 when some "
    "failed (their rows say why), 2 when the run cannot start, 130 when interrupted (the "
    "same command again finishes it; finished spectra are skipped).")


def _load_recipe(path: str):
    from .errors import SeriesError
    from .session import Recipe, Session

    try:
        return Recipe.load(path)
    except SeriesError as exc:
        if "widgetkit-session" not in str(exc):
            raise
    return Session.load(path).recipe()


def _cmd_series(args: argparse.Namespace) -> int:
    from .errors import WidgetkitError
    from .series import run_series

    recipe, code = read_or_fail("series", "recipe file", _load_recipe, args.recipe)
    if recipe is None:
        return code
    variable = None if args.variable is None else (args.variable, args.unit)
    try:
        res = run_series(recipe, args.sources, variable=variable, workers=args.workers,
                         client=args.scheduler, progress=not args.quiet, out=args.out,
                         warm_start=not args.no_warm_start)
    except (WidgetkitError, OSError) as exc:
        _err("series", str(exc))
        return 2
    res.save(res.folder)
    c = res.counts()
    print(f"{len(res)} spectra: {c['ok']} ok, {c['doubtful']} doubtful, {c['failed']} failed")
    for _, row in res.spectra.iterrows():
        if row["status"] != "ok":
            print(f"  {row['spectrum']}: {row['status']}: {row['reasons']}")
    print(f"series file: {res.path}\nconstants:   {res.folder / 'constants.csv'}")
    if res.interrupted:
        _err("series", "interrupted; run the same command again to finish")
        return 130
    return 1 if c["failed"] else 0


def verify_series(args: argparse.Namespace) -> int:
    """``widgetkit verify`` on a series file (exit codes in the module notes)."""
    from .errors import WidgetkitError
    from .series import SeriesResult

    res, code = read_or_fail("verify", "series file", SeriesResult.load, args.file)
    if res is None:
        return code
    try:
        report = res.verify(workers=getattr(args, "workers", None),
                            client=getattr(args, "scheduler", None), progress=False)
    except WidgetkitError as exc:
        _err("verify", str(exc))
        return 2
    print(f"{args.file}: {report}")
    return 0 if report.ok else 1


def register_series(sub) -> None:
    """Add ``series`` to the sub-command parser ``sub``."""
    p = sub.add_parser("series", help="run a recipe over many spectra (all cores or a Dask "
                                      "cluster)", description=_HELP)
    p.add_argument("recipe", help="a recipe (.json from Recipe.save) or a saved session")
    p.add_argument("sources", nargs="+", help="spectrum files, folders or glob patterns")
    p.add_argument("--out", required=True, metavar="DIR",
                   help="output folder (series.json, sessions/, constants.csv)")
    p.add_argument("--workers", type=int, metavar="N",
                   help="local worker processes (default: every core)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="run on the Dask cluster of this scheduler, e.g. tcp://10.0.0.5:8786")
    p.add_argument("--variable", metavar="SPEC",
                   help="the series variable: a header field (e.g. 'set temperature') or a "
                        "regular expression with a group on the file name (e.g. '_(\\d+)K')")
    p.add_argument("--unit", help="unit of the series variable (default: from the header)")
    p.add_argument("--no-warm-start", action="store_true",
                   help="do not run failed or doubtful spectra again from their neighbour")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.set_defaults(func=_cmd_series)


def add_verify_options(p) -> None:
    """The options ``verify`` takes for a series file."""
    p.add_argument("--workers", type=int, metavar="N",
                   help="series file only: local worker processes (default: every core)")
    p.add_argument("--scheduler", metavar="ADDRESS",
                   help="series file only: verify on the Dask cluster of this scheduler")


#: the registration functions, in the order the commands are listed
COMMANDS = [register_series]
