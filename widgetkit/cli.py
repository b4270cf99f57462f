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
    from .errors import WidgetkitError
    from .series.result import is_series_file
    from .session import Session

    if is_series_file(args.file):
        return verify_series(args)

    try:
        session = Session.load(args.file)
    except FileNotFoundError:
        print(f"widgetkit verify: {args.file}: no such file", file=sys.stderr)
        return 2
    except IsADirectoryError:
        print(f"widgetkit verify: {args.file}: is a folder, not a session file", file=sys.stderr)
        return 2
    except (WidgetkitError, OSError) as exc:
        print(f"widgetkit verify: cannot read the session: {exc}", file=sys.stderr)
        return 2
    except Exception as exc:  # never a traceback for a file, whatever it holds
        print(f"widgetkit verify: cannot read the session {args.file}: "
              f"{type(exc).__name__}: {str(exc)[:200]}", file=sys.stderr)
        return 2
    report = session.verify()
    print(f"{args.file}: {report}")
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
