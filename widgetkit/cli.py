"""The ``widgetkit`` command line.

``widgetkit verify FILE``
    Replay a saved session; exit 0 when it reproduces its recorded results,
    1 when it does not (the mismatches are printed, steps numbered from 0, the
    load step), 2 when the file is unreadable or malformed (one line on stderr,
    never a traceback).

``widgetkit verify SERIES_FILE``: every session of a series, see :mod:`widgetkit.cli_series`.

``widgetkit report`` and ``widgetkit demo``: see :mod:`widgetkit.cli_extra`;
``widgetkit series``: see :mod:`widgetkit.cli_series`.
"""

from __future__ import annotations

import argparse
import sys

from .cli_extra import COMMANDS as _REPORT_AND_DEMO_COMMANDS
from .cli_series import COMMANDS as _SERIES_COMMANDS
from .cli_series import add_verify_options, verify_series

__all__ = ["main"]


def _cmd_verify(args: argparse.Namespace) -> int:
    from ._cli_common import read_or_fail
    from .series.result import is_series_file
    from .session import Session

    if is_series_file(args.file):
        return verify_series(args)
    session, code = read_or_fail("verify", "session file", Session.load, args.file)
    if session is None:
        return code
    report = session.verify()
    print(f"{args.file}: {report}")
    if not report.ok and not any("seal" in m or "sha256" in m for m in report.mismatches):
        # nothing was edited (every seal holds): the code computes differently now
        print(f"Every seal holds, so the file is as saved: the results differ because this "
              f"version of widgetkit computes these steps differently. `widgetkit migrate "
              f"{args.file} NEW.json` runs them again in this version and lists what moved.")
    return 0 if report.ok else 1


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="widgetkit",
        description="Vibrational spectroscopy sessions: verify, report, demo, series.")
    sub = parser.add_subparsers(dest="command", required=True, metavar="COMMAND")
    p = sub.add_parser("verify", help="replay a saved session and compare with its record")
    p.add_argument("file", help="a saved session (.json) or a series file (series.json)")
    add_verify_options(p)
    p.set_defaults(func=_cmd_verify)
    for register in _EXTRA_COMMANDS:
        register(sub)
    return parser


#: functions that add further sub-commands (report, demo) to the parser
_EXTRA_COMMANDS: list = [*_REPORT_AND_DEMO_COMMANDS, *_SERIES_COMMANDS]


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    return int(args.func(args))


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
