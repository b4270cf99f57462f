"""The ``report``, ``migrate`` and ``demo`` sub-commands of ``widgetkit``.

``widgetkit report FILE -o OUT [--bundle DIR] [--overwrite] [--verify] [--title TEXT]``
    Write the report of a saved session; the format follows OUT's suffix (.md, .html,
    .tex, .csv). ``--bundle DIR`` writes the supplementary bundle (session, reports,
    processed spectrum as JCAMP-DX and CSV, a README for the referee, SHA256SUMS).
    Exit 0 on success, 1 when ``--verify`` found mismatches (the report is still
    written and says so), 2 when the session cannot be read or the output not written.

``widgetkit migrate OLD NEW [--overwrite]``
    Bring a session file saved by an older widgetkit up to date (every recorded step run
    again in this version; see :mod:`widgetkit.session.migrate`). Exit 0 when every step ran
    again, 1 when one could not (the session up to there is written), 2 on unreadable input
    or an output that cannot be written.

``widgetkit demo [--dir DIR] [--no-browser] [--yes] [--port N]``
    Copy the sample notebooks and demo data to DIR (default ``~/widgetkit-demo``) and
    start JupyterLab there on ``01-quick-start.ipynb`` (127.0.0.1 only, token on).
    As root (most containers) Jupyter's ``--allow-root`` is passed and one line says so.
    A notebook you have edited is never replaced without asking (``--yes`` answers
    yes; the edited copy is kept as a backup).
"""

from __future__ import annotations

import argparse
import os
import sys

from ._cli_common import err as _err
from ._cli_common import read_or_fail

__all__ = ["register_report", "register_demo", "COMMANDS"]


_REPORT_HELP = (
    "Write the report of a saved session; the format follows OUT's suffix (.md, .html, .tex, "
    ".csv). --bundle DIR writes the supplementary bundle: the session, the reports, the processed "
    "spectrum as JCAMP-DX and CSV, a README for the referee and SHA256SUMS. Exit status 0 on "
    "success, 1 when --verify found mismatches (the report is still written and says so), 2 when "
    "the session cannot be read or the output cannot be written.")
_MIGRATE_HELP = (
    "Run every step of a session file saved by an older widgetkit again in this version, from "
    "the file's embedded data, and write the result to NEW (OLD is only read). Lists the steps "
    "whose results came out other than recorded. Exit status 0 when every step ran again, 1 "
    "when a step could not be (the session up to there is written), 2 when OLD cannot be read "
    "or NEW not written.")
_DEMO_HELP = (
    "Copy the sample notebooks and the demo data to a folder of yours (default ~/widgetkit-demo) "
    "and start JupyterLab there on 01-quick-start.ipynb, listening on 127.0.0.1 only with "
    "Jupyter's token authentication on. A notebook you edited is never replaced without asking.")


def _cmd_report(args: argparse.Namespace) -> int:
    from .errors import WidgetkitError
    from .report import collect, write_bundle, write_report
    from .report.bundle import check_bundle_folder
    from .report.write import check_report_path
    from .session import Session

    if args.output is None and args.bundle is None:
        _err("report", "give -o OUT (a .md, .html, .tex or .csv file) and/or --bundle DIR")
        return 2
    try:  # every path is checked before the session is read
        if args.output is not None:
            check_report_path(args.output)
        if args.bundle is not None:
            check_bundle_folder(args.bundle, overwrite=args.overwrite)
    except (WidgetkitError, OSError) as exc:
        _err("report", str(exc))
        return 2
    session, code = read_or_fail("report", "session file", Session.load, args.file)
    if session is None:
        return code
    try:
        data = collect(session, title=args.title, verify=args.verify)
        if args.output is not None:
            for path in write_report(data, args.output):
                print(f"wrote {path}")
        if args.bundle is not None:
            bundle = write_bundle(session, args.bundle, overwrite=args.overwrite, data=data)
            print(f"wrote the {bundle}")
    except (WidgetkitError, OSError) as exc:
        _err("report", str(exc))
        return 2
    if data.verified is False:
        _err("report", "the session does NOT replay to its record:\n  "
             + "\n  ".join(data.verify_messages))
        return 1
    return 0


def register_report(sub) -> None:
    """Add ``report`` to the sub-command parser ``sub``."""
    p = sub.add_parser("report", help="write a report (.md/.html/.tex/.csv) or a supplementary bundle",
                       description=_REPORT_HELP)
    p.add_argument("file", help="a saved session (.json)")
    p.add_argument("-o", "--output", metavar="OUT", help="report file; format from the suffix")
    p.add_argument("--bundle", metavar="DIR", help="also write the supplementary bundle to DIR")
    p.add_argument("--overwrite", action="store_true", help="replace an existing bundle in DIR")
    p.add_argument("--verify", action="store_true",
                   help="replay the session first and state the outcome in the report")
    p.add_argument("--title", help="report title (default: the spectrum's title)")
    p.set_defaults(func=_cmd_report)


def _cmd_migrate(args: argparse.Namespace) -> int:
    from ._files import check_writable
    from .errors import WidgetkitError
    from .session import Session

    try:  # the output is checked before anything is computed
        if os.path.exists(args.new) and os.path.samefile(args.new, args.old):
            _err("migrate", f"{args.new} is the file being migrated; write the migrated session "
                            "to a new file (the old one stays as the record)")
            return 2
        if os.path.exists(args.new) and not args.overwrite:
            _err("migrate", f"{args.new} exists; give --overwrite to replace it")
            return 2
        check_writable(args.new)
    except (WidgetkitError, OSError) as exc:
        _err("migrate", str(exc))
        return 2
    report, code = read_or_fail("migrate", "session file", Session.migrate, args.old)
    if report is None:
        return code
    try:
        report.session.save(args.new)
    except (WidgetkitError, OSError) as exc:
        _err("migrate", str(exc))
        return 2
    print(report)
    print(f"wrote {args.new}; check it with: widgetkit verify {args.new}")
    return 0 if report.ok else 1


def register_migrate(sub) -> None:
    """Add ``migrate`` to the sub-command parser ``sub``."""
    p = sub.add_parser("migrate", help="bring a session file saved by an older widgetkit up to "
                                       "date", description=_MIGRATE_HELP)
    p.add_argument("old", help="the session file saved by an older widgetkit (only read)")
    p.add_argument("new", help="the session file to write")
    p.add_argument("--overwrite", action="store_true", help="replace NEW when it exists")
    p.set_defaults(func=_cmd_migrate)


def _ask_on_terminal(rel: str) -> bool:
    if not sys.stdin.isatty():
        return False
    answer = input(f"{rel} has been edited since it was copied; replace it with the shipped "
                   "version (your copy is kept as a backup)? [y/N] ")
    return answer.strip().lower() in ("y", "yes")


def _cmd_demo(args: argparse.Namespace) -> int:
    from . import demo
    from .errors import WidgetkitError

    ask = (lambda rel: True) if args.yes else _ask_on_terminal
    try:
        return demo.run_demo(args.dir, browser=not args.no_browser, ask=ask, port=args.port,
                             allow_root=args.allow_root, echo=print)
    except (WidgetkitError, OSError) as exc:
        _err("demo", str(exc))
        return 2


def register_demo(sub) -> None:
    """Add ``demo`` to the sub-command parser ``sub``."""
    p = sub.add_parser("demo", help="copy the sample notebooks and open JupyterLab on the quick start",
                       description=_DEMO_HELP)
    p.add_argument("--dir", help="folder for the notebooks and data (default ~/widgetkit-demo)")
    p.add_argument("--no-browser", action="store_true", help="do not open a browser")
    p.add_argument("--yes", action="store_true",
                   help="replace notebooks you edited (backups are kept)")
    p.add_argument("--port", type=int, help="port of the server (default: Jupyter's choice)")
    root = p.add_mutually_exclusive_group()
    root.add_argument("--allow-root", dest="allow_root", action="store_true", default=None,
                      help="pass --allow-root to Jupyter (the default when you are root, as in "
                           "most containers: Jupyter refuses to start as root otherwise)")
    root.add_argument("--no-allow-root", dest="allow_root", action="store_false",
                      help="never pass --allow-root, even as root")
    p.set_defaults(func=_cmd_demo, allow_root=None)


#: the registration functions, in the order the commands are listed
COMMANDS = [register_report, register_migrate, register_demo]
