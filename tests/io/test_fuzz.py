"""Property-based fuzzing of the readers (hypothesis).

Each case takes a file our writers make (DIFDUP, AFFN and point-list JCAMP-DX, CSV) or a
sample file, mutates it, reads it, and checks two properties:

1. only :class:`SpectrumFormatError` is raised (never another exception);
2. no wrong read: a spectrum that is returned equals what an independent decoder
   (``tests/io/_oracle.py``, written separately from the JCAMP-DX tables and the CSV rules)
   finds in the same bytes, and a file that decoder finds invalid is refused.

Mutations that keep the meaning (line ends, byte-order mark, comments, label spelling, the
order of header labels, quoted names, extra columns) must give back the original spectrum.

The unmarked tests run a few hundred cases each within seconds; the ``slow`` ones run 10,000
cases per reader (``benchmarks/bench_fuzz.py`` runs the same mutations without hypothesis and
reports times).
"""

from __future__ import annotations

import contextlib
import os
import random
from pathlib import Path

import numpy as np
import pytest
from _oracle import Invalid, csv_rows, jcamp_values
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import widgetkit as wk
from widgetkit.errors import SpectrumFormatError
from widgetkit.io import read_spectrum, write_csv, write_jcamp
from widgetkit.io import text as text_mod

DATA = Path(__file__).parent.parent / "data" / "io"
QUICK = int(os.environ.get("WIDGETKIT_FUZZ_QUICK", "300"))
FULL = 10_000
_SETTINGS = dict(deadline=None, derandomize=True, database=None,
                 suppress_health_check=list(HealthCheck))


def _corpus(tmp: Path) -> dict[str, list[bytes]]:
    rng = np.random.default_rng(12)
    files: dict[str, list[bytes]] = {"jcamp": [], "text": []}
    for k, n in enumerate((7, 40, 200)):
        x = np.linspace(1000.0 + k, 1100.0 + 3 * k, n)
        y = 0.05 + np.exp(-((x - x.mean()) / 4.0) ** 2) + 1e-3 * rng.normal(size=n)
        s = wk.Spectrum(x, y, y_kind="absorbance", meta={"title": f"fuzz demo {k}"})
        for form in ("DIFDUP", "AFFN", "XYPOINTS"):
            files["jcamp"].append(Path(write_jcamp(s, tmp / "w.jdx", form=form)).read_bytes())
        files["text"].append(Path(write_csv(s, tmp / "w.csv")).read_bytes())
    for p in sorted(DATA.glob("lr*")):
        files["jcamp" if p.suffix == ".jdx" else "text"].append(p.read_bytes())
    return files


@pytest.fixture(scope="module")
def corpus(tmp_path_factory):
    return _corpus(tmp_path_factory.mktemp("corpus"))


_ALPHABET = list(b"0123456789@ABCDEFGHIabcdefghi%JKLMNOPQRjklmnopqrSTUVWXYZs+-.eE ,;\t\n\r#$=?\"")
_ALPHABET += [0, 0xFF, 0xEF, 0xBB, 0xBF]

#: longer pieces: big numbers and counts, quotes and line breaks, a stray CR in a comment,
#: unclosed brackets and a line longer than the 64 KiB the text sniffer reads first
PIECES = ["9" * 19, "0.5", "E+400", "s9999", "-", ".", '"\n', "\r# c\r", "(" * 3000,
          "\n" + "x" * 70_000 + "\n", "nan", ",inf"]

_OPS = ("set", "insert", "delete", "truncate", "dupline", "piece")


def ops_from_seed(seed: int) -> list[tuple[str, float, object]]:
    """One to four mutations drawn from ``seed`` (hypothesis draws the seeds: far cheaper
    than drawing nested tuples, and a failing seed reproduces the case exactly)."""
    r = random.Random(seed)
    ops = []
    for _ in range(r.randint(1, 4)):
        op = r.choice(_OPS)
        arg = {"set": r.choice(_ALPHABET), "insert": r.choice(_ALPHABET),
               "delete": r.randint(1, 40), "truncate": 0, "dupline": r.randint(1, 3),
               "piece": r.choice(PIECES)}[op]
        ops.append((op, r.random(), arg))
    return ops


def mutate(data: bytes, ops) -> bytes:
    b = bytearray(data)
    for op, where, arg in ops:
        i = min(int(where * len(b)), max(len(b) - 1, 0))
        if op == "set" and b:
            b[i] = arg
        elif op == "insert":
            b[i:i] = bytes([arg])
        elif op == "delete":
            del b[i:i + arg]
        elif op == "truncate":
            del b[i:]
        elif op == "dupline":
            start = b.rfind(b"\n", 0, i) + 1
            end = b.find(b"\n", i)
            end = len(b) if end < 0 else end + 1
            b[start:start] = bytes(b[start:end]) * arg
        elif op == "piece":
            b[i:i] = arg.encode()
    return bytes(b)


@contextlib.contextmanager
def _careful_only():
    """Read delimited text with the careful line-by-line pass only."""
    fast = text_mod._fast_columns
    text_mod._fast_columns = lambda *a: None
    try:
        yield
    finally:
        text_mod._fast_columns = fast


def _judge(path: Path, data: bytes, oracle, checks: str) -> None:
    """Read ``path``; only SpectrumFormatError, and (checks="strict") never a read the oracle
    disputes. With checks="warn" a failed check is accepted on purpose, so only the first
    property is checked."""
    try:
        s = read_spectrum(path, x_unit="cm-1", y_kind="absorbance", checks=checks)
    except SpectrumFormatError as exc:
        if oracle is csv_rows and checks == "strict":  # the careful pass refuses alike
            with _careful_only():
                with pytest.raises(SpectrumFormatError) as info:
                    read_spectrum(path, x_unit="cm-1", y_kind="absorbance")
            assert (info.value.line, info.value.reason) == (exc.line, exc.reason), \
                f"the passes differ: {data[:300]!r}"
        return
    if checks != "strict":
        return
    if oracle is csv_rows:  # the careful pass must give the same spectrum
        with _careful_only():
            again = read_spectrum(path, x_unit="cm-1", y_kind="absorbance")
        assert again == s and again.meta == s.meta, f"the passes differ: {data[:300]!r}"
    try:
        expected = oracle(data.decode("utf-8", "replace"))
        invalid = None
    except Invalid as exc:
        expected, invalid = None, exc
    assert invalid is None, f"read a file the oracle refuses ({invalid}): {data[:300]!r}"
    if expected is None:
        return
    x, y = expected
    order = np.argsort(x, kind="stable")
    assert np.array_equal(s.x, x[order]), f"x differs: {data[:300]!r}"
    assert np.array_equal(s.y, y[order]), f"y differs: {data[:300]!r}"


def fuzz_case(tmp_path, corpus, kind, pick, seed):
    """Mutate corpus file ``pick`` with the mutations of ``seed`` and judge the read."""
    base = corpus[kind][pick % len(corpus[kind])]
    data = mutate(base, ops_from_seed(seed))
    p = tmp_path / ("m.jdx" if kind == "jcamp" else "m.csv")
    p.unlink(missing_ok=True)  # rewriting a truncated file can force a flush to disk (ext4)
    p.write_bytes(data)
    # the reader tells the formats apart by content, and so does the choice of oracle
    looks_jcamp = data.lstrip(b"\xef\xbb\xbf \t\r\n").startswith(b"##")
    _judge(p, data, jcamp_values if looks_jcamp else csv_rows,
           "warn" if pick % 4 == 3 else "strict")


cases = (st.integers(0, 10_000), st.integers(0, 2**32 - 1))


@settings(max_examples=QUICK, **_SETTINGS)
@given(*cases)
def test_mutated_jcamp_files_raise_only_format_errors_and_never_read_wrong(corpus, pick,
                                                                          seed):
    fuzz_case(_TMP["j"], corpus, "jcamp", pick, seed)


@settings(max_examples=QUICK, **_SETTINGS)
@given(*cases)
def test_mutated_text_files_raise_only_format_errors_and_never_read_wrong(corpus, pick,
                                                                         seed):
    fuzz_case(_TMP["t"], corpus, "text", pick, seed)


@pytest.mark.slow
@settings(max_examples=FULL, **_SETTINGS)
@given(*cases)
def test_ten_thousand_mutated_jcamp_files(corpus, pick, seed):
    fuzz_case(_TMP["j"], corpus, "jcamp", pick, seed)


@pytest.mark.slow
@settings(max_examples=FULL, **_SETTINGS)
@given(*cases)
def test_ten_thousand_mutated_text_files(corpus, pick, seed):
    fuzz_case(_TMP["t"], corpus, "text", pick, seed)


_TMP: dict[str, Path] = {}


@pytest.fixture(scope="module", autouse=True)
def _scratch(tmp_path_factory):
    _TMP["j"] = tmp_path_factory.mktemp("fuzz_j")
    _TMP["t"] = tmp_path_factory.mktemp("fuzz_t")


# ---- mutations that keep the meaning: the same spectrum must come back ----

def _crlf(b: bytes) -> bytes:
    return b.replace(b"\n", b"\r\n")


def _cr(b: bytes) -> bytes:
    return b.replace(b"\n", b"\r")


def _bom(b: bytes) -> bytes:
    return b"\xef\xbb\xbf" + b


def _utf16(b: bytes) -> bytes:
    return b.decode("utf-8").encode("utf-16")


def _jcamp_comments(b: bytes) -> bytes:
    lines = b.split(b"\n")
    return b"\n".join(ln + b" $$ note" if ln and not ln.startswith(b"##END") else ln
                      for ln in lines)


def _jcamp_label_spelling(b: bytes) -> bytes:
    return (b.replace(b"##DATA TYPE=", b"##data_type=").replace(b"##NPOINTS=", b"##N Points=")
            .replace(b"##FIRSTX=", b"##first-x=").replace(b"##YFACTOR=", b"##Y/Factor="))


def _jcamp_version_first(b: bytes) -> bytes:
    lines = b.split(b"\n")
    version = [ln for ln in lines if ln.startswith(b"##JCAMP-DX=")]
    rest = [ln for ln in lines if not ln.startswith(b"##JCAMP-DX=")]
    return b"\n".join(version + rest)


def _jcamp_private(b: bytes) -> bytes:
    return b.replace(b"##XUNITS=", b"##$LR NOTE=private label\n##XUNITS=", 1)


def _jcamp_firsty_truncated(b: bytes) -> bytes:
    lines = b.split(b"\n")
    for k, ln in enumerate(lines):
        if ln.startswith(b"##FIRSTY="):
            v = float(ln[9:])
            if v != 0:
                e = int(np.floor(np.log10(abs(v))))
                m = np.trunc(abs(v) / 10.0 ** (e - 2)) / 100
                lines[k] = f"##FIRSTY={'-' if v < 0 else ''}{m:.2f}E{e:+03d}".encode()
    return b"\n".join(lines)


def _csv_quoted(b: bytes) -> bytes:
    head, _, body = b.partition(b"\nwavenumber (cm-1),absorbance\n")
    return head + b'\n"wavenumber (cm-1)","absorbance"\n' + body


def _csv_semicolon_decimal_comma(b: bytes) -> bytes:
    head, _, body = b.partition(b"\nwavenumber (cm-1),absorbance\n")
    return (head + b"\nwavenumber (cm-1);absorbance\n"
            + body.replace(b",", b";").replace(b".", b","))


def _csv_extra_column(b: bytes) -> bytes:
    head, _, body = b.partition(b"\nwavenumber (cm-1),absorbance\n")
    rows = body.rstrip(b"\n").split(b"\n")
    spare = (b"nan", b"inf", b"1.5", b"-Infinity")
    body = b"\n".join(r + b"," + spare[k % 4] for k, r in enumerate(rows)) + b"\n"
    return head + b"\nwavenumber (cm-1),absorbance,spare\n" + body


def _csv_comment_lines(b: bytes) -> bytes:
    rows = b.split(b"\n")
    return b"\n".join(r + (b"\n# a remark\r" if k % 5 == 3 else b"") for k, r in enumerate(rows))


JCAMP_SAME = [_crlf, _cr, _bom, _utf16, _jcamp_comments, _jcamp_label_spelling,
              _jcamp_version_first, _jcamp_private, _jcamp_firsty_truncated]
TEXT_SAME = [_crlf, _cr, _bom, _utf16, _csv_quoted, _csv_semicolon_decimal_comma,
             _csv_extra_column, _csv_comment_lines]


SAME = [("jcamp", f, 9) for f in JCAMP_SAME] + [("text", f, 3) for f in TEXT_SAME]


@pytest.mark.parametrize("kind, change, count", SAME,
                         ids=[f"{k}-{f.__name__.strip('_')}" for k, f, _ in SAME])
def test_meaning_preserving_changes_give_the_same_spectrum(tmp_path, corpus, kind, change,
                                                           count):
    suffix = ".jdx" if kind == "jcamp" else ".csv"
    for k, data in enumerate(corpus[kind][:count]):  # the writers' files
        original = tmp_path / f"o{k}{suffix}"
        original.write_bytes(data)
        changed = tmp_path / f"c{k}{suffix}"
        changed.write_bytes(change(data))
        a, b = read_spectrum(original), read_spectrum(changed)
        assert np.array_equal(a.x, b.x) and np.array_equal(a.y, b.y), change.__name__
        assert a.y_kind == b.y_kind
