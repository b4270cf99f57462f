"""The C allocator's thresholds while a series task runs (Linux with glibc only).

glibc's ``malloc`` normally adapts two thresholds as a program runs: blocks
larger than the *mmap threshold* get pages of their own from the system, and
free memory at the top of the heap beyond the *trim threshold* is returned to
it. After a large block is freed the thresholds rise, so a numerical task that
allocates and frees the same large arrays again and again (a line fit's
Jacobian and residuals: megabytes per evaluation) soon takes them from memory
it already has.

Setting either threshold in the environment (``MALLOC_TRIM_THRESHOLD_``,
``MALLOC_MMAP_THRESHOLD_`` or the ``glibc.malloc.*`` entries of
``GLIBC_TUNABLES``) switches that adaptation off for the whole process. Dask's
worker processes are started that way (its nanny sets
``MALLOC_TRIM_THRESHOLD_=65536`` so that workers give memory back promptly):
every large array then costs fresh pages from the system, each touched page a
fault. A spectrum of benchmarks/bench_series.py took 245 instead of 207 ms
of processor time in a serial run with that variable set; on Dask workers
this was most of their extra cost (292 ms per spectrum against 223 in the
process pool before, 247 against 215 with the thresholds of a task; the rest
is the workers' first imports and their own threads).

:func:`task_thresholds` restores for the duration of a task the thresholds
glibc itself would reach (32 MiB, its ceiling, and twice that for trimming),
and afterwards the process's own settings, then gives free memory back
(``malloc_trim``), so between tasks the worker holds what its configuration
asks for. Where no threshold is fixed (a process pool, a serial run, most
programs), where the values cannot be read, or off glibc, it does nothing.
The environment that counts is the one the process started with (what glibc
read; ``/proc/self/environ``), not later changes to ``os.environ``.
Tasks that overlap in the threads of one process share one raise: the first
to start raises, the last to end restores.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import os
import sys
import threading
from contextlib import contextmanager

__all__ = ["task_thresholds", "fixed_thresholds"]

#: mallopt parameter numbers (malloc.h)
_M_TRIM_THRESHOLD, _M_MMAP_THRESHOLD = -1, -3
#: glibc's defaults for a threshold not given (DEFAULT_TRIM_THRESHOLD, DEFAULT_MMAP_THRESHOLD_MIN)
_DEFAULT = 128 * 1024
#: during a task: glibc's ceiling for the adaptive mmap threshold on 64-bit systems
#: (DEFAULT_MMAP_THRESHOLD_MAX) and the trim threshold it pairs with it (twice as large)
TASK_MMAP = 32 * 1024 * 1024
TASK_TRIM = 2 * TASK_MMAP

_lock = threading.Lock()
_active = 0
_libc = None
_environ = None


def _number(text: str | None) -> int | None:
    if text is None or not text.strip():
        return None
    try:
        value = int(text.strip(), 0)
    except ValueError:
        raise ValueError(text) from None
    if value < 0:
        raise ValueError(text)
    return value


def fixed_thresholds(environ=None) -> tuple[int, int] | None:
    """(trim, mmap) thresholds when ``environ`` (default ``os.environ``) fixes either (the other at glibc's
    default), else None: glibc adapts them itself. An mmap threshold above glibc's ceiling
    (:data:`TASK_MMAP`) fixes nothing, as glibc ignores it. Raises ValueError for a value
    that is not a whole number >= 0 (glibc would ignore it; so do we)."""
    env = os.environ if environ is None else environ
    trim = _number(env.get("MALLOC_TRIM_THRESHOLD_"))
    mmap = _number(env.get("MALLOC_MMAP_THRESHOLD_"))
    for item in (env.get("GLIBC_TUNABLES") or "").split(":"):
        name, _, value = item.partition("=")
        if name.strip() == "glibc.malloc.trim_threshold":
            trim = _number(value)
        elif name.strip() == "glibc.malloc.mmap_threshold":
            mmap = _number(value)
    if mmap is not None and mmap > TASK_MMAP:
        mmap = None  # above glibc's ceiling: glibc ignores it and keeps adapting
    if trim is None and mmap is None:
        return None
    return (_DEFAULT if trim is None else trim), (_DEFAULT if mmap is None else mmap)


def _start_environ() -> dict:
    """The environment this process started with (what glibc read), else ``os.environ``."""
    global _environ
    if _environ is None:
        try:
            with open("/proc/self/environ", "rb") as fh:
                items = fh.read().split(b"\0")
            _environ = dict(i.decode("utf-8", "replace").partition("=")[::2] for i in items if i)
        except OSError:
            _environ = dict(os.environ)
    return _environ


def _glibc():
    global _libc
    if _libc is None:
        _libc = False
        name = ctypes.util.find_library("c") if sys.platform.startswith("linux") else None
        try:
            lib = ctypes.CDLL(name or "libc.so.6")
            lib.gnu_get_libc_version  # noqa: B018 - only glibc has it
            lib.mallopt.argtypes = [ctypes.c_int, ctypes.c_int]
            lib.malloc_trim.argtypes = [ctypes.c_size_t]
            _libc = lib
        except (OSError, AttributeError):
            pass
    return _libc or None


def _set(lib, trim: int, mmap: int) -> None:
    lib.mallopt(_M_MMAP_THRESHOLD, min(mmap, 2**31 - 1))
    lib.mallopt(_M_TRIM_THRESHOLD, min(trim, 2**31 - 1))


@contextmanager
def task_thresholds():
    """Run the body with glibc's adaptive-ceiling thresholds when the process fixed its own
    (module notes); restore them and trim afterwards."""
    global _active
    try:
        own = fixed_thresholds(_start_environ())
    except ValueError:
        own = None
    lib = _glibc() if own is not None else None
    if lib is None:
        yield
        return
    with _lock:
        _active += 1
        if _active == 1:
            _set(lib, TASK_TRIM, TASK_MMAP)
    try:
        yield
    finally:
        with _lock:
            _active -= 1
            if _active == 0:
                _set(lib, *own)
                lib.malloc_trim(0)
