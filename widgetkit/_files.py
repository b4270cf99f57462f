"""Atomic, shareable file writes: the one writer of the package (sessions, recipes, series
files, reports and bundles, spectra written by `widgetkit.io`, the demo folder).

:func:`atomic_write` writes through a temporary file in the target's folder and
renames it over the target, so a reader sees the old file or the new one,
never a part. Beyond the usual recipe it:

* follows a symbolic link and writes the file it points to (the link stays a
  link);
* gives a new file the mode a plain ``open`` would (0666 less the umask: 0644
  under umask 022), and an existing file keeps its own mode;
* names its temporary files ``.<name>.wk-<host>-<pid>-<random>.tmp``, so a
  later write can prove that one was left by a writer of ours that died on
  this host (its process no longer exists) and remove it: a save killed
  half-way leaves nothing behind after the next save;
* checks the place before anything is written and raises
  :class:`~widgetkit.errors.FilePathError` naming the user's path.
"""

from __future__ import annotations

import os
import re
import secrets
import socket
import stat

from .errors import FilePathError

__all__ = ["atomic_write", "check_writable", "stale_temporaries"]

_HOST = re.sub(r"[^A-Za-z0-9_]", "_", socket.gethostname())[:40] or "host"


def _shown(path) -> str:
    typed = os.fspath(path)
    full = os.path.abspath(os.path.expanduser(typed))
    return typed if typed == full else f"{typed} ({full})"


def check_writable(path, what: str = "save") -> str:
    """The real file ``path`` names (symbolic links followed), checked for writing: not a
    folder, in a folder that exists and may be written. Raises :class:`FilePathError`
    naming the path as given."""
    given = os.fspath(path)
    if not given:
        raise FilePathError(f"{what}: the file name is empty")
    real = os.path.realpath(os.path.expanduser(given))
    link = "" if real == os.path.abspath(os.path.expanduser(given)) else \
        f" (a link to {real})"
    folder = os.path.dirname(real)
    if os.path.isdir(real):
        raise FilePathError(f"{what}: {_shown(given)}{link} is a folder; give a file name")
    if not os.path.exists(folder):
        blocker = next((q for q in _parents(folder) if os.path.exists(q)), None)
        if blocker is not None and not os.path.isdir(blocker):
            raise FilePathError(f"{what}: cannot write {_shown(given)}{link}: {blocker} is a file, "
                                "not a folder")
        raise FilePathError(f"{what}: cannot write {_shown(given)}{link}: the folder {folder} "
                            "does not exist; create it first or choose another place")
    if not os.path.isdir(folder):
        raise FilePathError(f"{what}: cannot write {_shown(given)}{link}: {folder} is a file, "
                            "not a folder")
    if not os.access(folder, os.W_OK | os.X_OK):
        raise FilePathError(f"{what}: cannot write {_shown(given)}{link}: no permission to write "
                            f"in the folder {folder}")
    return real


def _parents(folder: str):
    while True:
        yield folder
        parent = os.path.dirname(folder)
        if parent == folder:
            return
        folder = parent


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except (PermissionError, OverflowError, OSError):
        return True
    return True


def stale_temporaries(real: str) -> list[str]:
    """Temporary files of earlier writes of ``real`` that provably died: our naming, this
    host, a process that no longer exists."""
    folder, base = os.path.split(real)
    pattern = re.compile(re.escape(f".{base}.wk-{_HOST}-") + r"(\d{1,10})-[0-9a-f]{16}\.tmp")
    out = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return out
    for entry in entries:
        m = pattern.fullmatch(entry.name)
        if m and int(m.group(1)) != os.getpid() and not _alive(int(m.group(1))) \
                and entry.is_file(follow_symlinks=False):
            out.append(entry.path)
    return out


def atomic_write(path, data: bytes, *, what: str = "save") -> str:
    """Write ``data`` to ``path`` atomically (module docstring); returns the real path
    written. On any failure the previous file is untouched and no temporary file is left."""
    real = check_writable(path, what)
    for old in stale_temporaries(real):
        try:
            os.unlink(old)
        except OSError:  # pragma: no cover - removed by another writer meanwhile
            pass
    folder, base = os.path.split(real)
    try:
        keep_mode = stat.S_IMODE(os.stat(real).st_mode)
    except FileNotFoundError:
        keep_mode = None
    tmp = os.path.join(folder, f".{base}.wk-{_HOST}-{os.getpid()}-{secrets.token_hex(8)}.tmp")
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)  # 0666 less the umask
    except OSError as exc:
        raise FilePathError(f"{what}: cannot write in the folder {folder}: "
                            f"{exc.strerror or exc}") from None
    try:
        with os.fdopen(fd, "wb") as fh:
            if keep_mode is not None:
                os.fchmod(fh.fileno(), keep_mode)
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, real)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
    try:  # make the rename durable where the platform allows it
        dfd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:  # pragma: no cover - not every filesystem allows fsync on a folder
        pass
    return real
