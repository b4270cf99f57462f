"""What every ``widgetkit`` sub-command shares: one line on stderr, and reading the file a
command is given without a traceback whatever the file holds (exit status 2)."""

from __future__ import annotations

import sys
from collections.abc import Callable

__all__ = ["err", "read_or_fail"]


def err(cmd: str, text: str) -> None:
    """``widgetkit <cmd>: <text>`` on stderr."""
    print(f"widgetkit {cmd}: {text}", file=sys.stderr)


def read_or_fail(cmd: str, what: str, load: Callable, path: str):
    """``(load(path), 0)``, or ``(None, 2)`` after one line on stderr naming ``path`` and what
    went wrong: no such file, a folder, a file that cannot be read or is malformed (any
    error, since a file may hold anything)."""
    from .errors import WidgetkitError

    try:
        return load(path), 0
    except FileNotFoundError:
        err(cmd, f"{path}: no such {what}")
    except IsADirectoryError:
        err(cmd, f"{path}: is a folder, not a {what}")
    except (WidgetkitError, OSError) as exc:
        err(cmd, f"cannot read the {what}: {exc}")
    except Exception as exc:  # never a traceback for a file, whatever it holds
        err(cmd, f"cannot read the {what} {path}: {type(exc).__name__}: {str(exc)[:200]}")
    return None, 2
