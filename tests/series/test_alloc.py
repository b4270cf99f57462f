"""series.alloc: the allocator's thresholds during a task where the environment fixed them."""

import os
import subprocess
import sys
import textwrap

import pytest

from widgetkit.series import alloc

#: glibc's default trim threshold and least mmap threshold, 128 KiB (glibc malloc/malloc.c,
#: DEFAULT_TRIM_THRESHOLD and DEFAULT_MMAP_THRESHOLD_MIN; mallopt(3))
GLIBC_DEFAULT = 128 * 1024
#: the value Dask's nanny puts in its workers' environment (distributed.yaml,
#: distributed.nanny.pre-spawn-environ)
DASK_TRIM = 65536


def test_the_environment_the_process_started_with_is_read():
    out = subprocess.run(
        [sys.executable, "-c", "import os; os.environ['MALLOC_TRIM_THRESHOLD_'] = '1'\n"
         "from widgetkit.series import alloc\n"
         "print(alloc._start_environ().get('MALLOC_TRIM_THRESHOLD_'))"],
        env={**os.environ, "MALLOC_TRIM_THRESHOLD_": str(DASK_TRIM)}, capture_output=True,
        text=True, check=True).stdout.strip()
    assert out == str(DASK_TRIM)


def test_thresholds_are_read_from_the_environment_and_glibc_tunables():
    assert alloc.fixed_thresholds({}) is None
    assert alloc.fixed_thresholds({"PATH": "/bin"}) is None
    assert alloc.fixed_thresholds({"MALLOC_TRIM_THRESHOLD_": str(DASK_TRIM)}) == \
        (DASK_TRIM, GLIBC_DEFAULT)
    assert alloc.fixed_thresholds({"MALLOC_MMAP_THRESHOLD_": "1048576"}) == \
        (GLIBC_DEFAULT, 1048576)
    tun = {"GLIBC_TUNABLES": "glibc.malloc.arena_max=2:glibc.malloc.mmap_threshold=0x100000"}
    assert alloc.fixed_thresholds(tun) == (GLIBC_DEFAULT, 0x100000)
    assert alloc.fixed_thresholds({"GLIBC_TUNABLES": "glibc.malloc.arena_max=2"}) is None
    # glibc refuses an mmap threshold above half its largest heap, 32 MiB on 64-bit systems
    # (malloc.c, do_set_mmap_threshold and HEAP_MAX_SIZE): nothing is fixed then
    assert alloc.fixed_thresholds({"MALLOC_MMAP_THRESHOLD_": str(64 * 2**20)}) is None
    with pytest.raises(ValueError):
        alloc.fixed_thresholds({"MALLOC_TRIM_THRESHOLD_": "lots"})
    with pytest.raises(ValueError):
        alloc.fixed_thresholds({"MALLOC_TRIM_THRESHOLD_": "-5"})


class _FakeLibc:
    def __init__(self):
        self.calls = []

    def mallopt(self, param, value):
        self.calls.append(("mallopt", param, value))
        return 1

    def malloc_trim(self, pad):
        self.calls.append(("trim", pad))
        return 1


@pytest.fixture
def fake_libc(monkeypatch):
    lib = _FakeLibc()
    monkeypatch.setattr(alloc, "_glibc", lambda: lib)
    return lib


def _started_with(monkeypatch, environ: dict) -> None:
    monkeypatch.setattr(alloc, "_start_environ", lambda: environ)


def test_nothing_is_changed_where_glibc_adapts_the_thresholds_itself(fake_libc, monkeypatch):
    _started_with(monkeypatch, {"PATH": "/bin"})
    monkeypatch.setenv("MALLOC_TRIM_THRESHOLD_", str(DASK_TRIM))  # set too late for glibc
    with alloc.task_thresholds():
        pass
    assert fake_libc.calls == []
    _started_with(monkeypatch, {"MALLOC_TRIM_THRESHOLD_": "not a number"})  # glibc ignores it
    with alloc.task_thresholds():
        pass
    assert fake_libc.calls == []


def test_fixed_thresholds_are_raised_for_the_task_and_restored_after_it(fake_libc, monkeypatch):
    _started_with(monkeypatch, {"MALLOC_TRIM_THRESHOLD_": str(DASK_TRIM)})
    raised = [("mallopt", alloc._M_MMAP_THRESHOLD, alloc.TASK_MMAP),
              ("mallopt", alloc._M_TRIM_THRESHOLD, alloc.TASK_TRIM)]
    restored = [("mallopt", alloc._M_MMAP_THRESHOLD, GLIBC_DEFAULT),
                ("mallopt", alloc._M_TRIM_THRESHOLD, DASK_TRIM), ("trim", 0)]
    with pytest.raises(RuntimeError):
        with alloc.task_thresholds():
            assert fake_libc.calls == raised
            raise RuntimeError("a failing task restores them too")
    assert fake_libc.calls == raised + restored
    fake_libc.calls.clear()
    # overlapping tasks (threads of one worker): the first raises, the last restores
    outer, inner = alloc.task_thresholds(), alloc.task_thresholds()
    outer.__enter__()
    inner.__enter__()
    assert fake_libc.calls == raised
    outer.__exit__(None, None, None)
    assert fake_libc.calls == raised
    inner.__exit__(None, None, None)
    assert fake_libc.calls == raised + restored


_PROBE = textwrap.dedent("""
    import ctypes
    import numpy as np
    from widgetkit.series.alloc import task_thresholds

    class Info(ctypes.Structure):  # struct mallinfo2 (malloc.h, glibc >= 2.33)
        _fields_ = [(n, ctypes.c_size_t) for n in ("arena", "ordblks", "smblks", "hblks",
                    "hblkhd", "usmblks", "fsmblks", "uordblks", "fordblks", "keepcost")]

    libc = ctypes.CDLL("libc.so.6")
    libc.mallinfo2.restype = Info

    def mapped_for_array(size=1_000_000):  # 8 MB, as a fit's Jacobian
        before = libc.mallinfo2().hblkhd  # bytes in blocks with pages of their own
        a = np.ones(size)
        during = libc.mallinfo2().hblkhd
        del a
        return during - before

    plain = mapped_for_array()
    with task_thresholds():
        inside = mapped_for_array()
    after = mapped_for_array()
    print(plain, inside, after)
""")


def _has_mallinfo2() -> bool:
    import ctypes

    try:
        return hasattr(ctypes.CDLL("libc.so.6"), "mallinfo2")
    except OSError:
        return False


@pytest.mark.skipif(not sys.platform.startswith("linux") or not _has_mallinfo2(),
                    reason="glibc's allocator (2.33 or later)")
def test_with_a_fixed_trim_threshold_a_large_array_comes_from_the_heap_only_in_a_task():
    env = {**os.environ, "MALLOC_TRIM_THRESHOLD_": str(DASK_TRIM)}
    out = subprocess.run([sys.executable, "-c", _PROBE], env=env, capture_output=True,
                         text=True, check=True).stdout.split()
    plain, inside, after = (int(v) for v in out)
    size = 8_000_000  # the array's bytes
    # a fixed trim threshold leaves glibc's mmap threshold at 128 KiB: the array gets pages of
    # its own (mapped afresh, and faulted in, every time); in a task it is taken from the heap,
    # and after the task the process's own setting holds again
    assert plain >= size
    assert inside < size
    assert after >= size
