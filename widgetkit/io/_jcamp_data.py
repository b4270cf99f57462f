"""The data records of a JCAMP-DX block, decoded and checked against the block's labels.

``##XYDATA=(X++(Y..Y))`` is decoded by :mod:`widgetkit.io.asdf`; x is rebuilt as
FIRSTX + i (LASTX - FIRSTX)/(NPOINTS - 1), the X written at the start of every line must
agree with it, and NPOINTS must equal the number of ordinates (McDonald and Wilks, Applied
Spectroscopy 42 (1988) 151). ``##XYDATA=(XY..XY)`` (and ``(XYXY)``), ``##XYPOINTS=`` and
``##PEAK TABLE=`` hold (x, y) pairs in AFFN.

The redundant labels are compared with the decoded data *to the precision they are written
in*: ``##FIRSTY=4.09E-08`` agrees with a decoded 4.096e-08 because the label carries three
significant digits. A writer may round (the decoded value lies within half a unit of the last
written digit) or truncate toward zero (its magnitude lies between the written one and one
unit more); the data's own quantisation, YFACTOR, is allowed on top. A mismatch beyond that signals a
decoding error and is refused (``checks="strict"``) or kept as a warning (``"warn"``).
``##DELTAX=`` is not used to place x; when it disagrees while the line X values confirm
FIRSTX, LASTX and NPOINTS, it is a nominal value and only a warning.
"""

from __future__ import annotations

import numpy as np

from ..errors import SpectrumFormatError
from ._common import decode_text, split_lines
from ._jcamp_blocks import DATA_LABELS, Checks, normalise_label, number, whole_number
from ._labels import number_and_rest, written_unit
from .asdf import MAX_VALUES, decode_xydata

__all__ = ["decode_block"]

_POINT_FORMS = ("(XY..XY)", "(XYXY)", "(XY)", "(XY...XY)", "(XY..)")
_PEAK_FORMS = {"(XYW..XYW)": 3, "(XYM..XYM)": 3, "(XYWM..XYWM)": 4}
_SEPARATORS = str.maketrans(",;", "  ")
_AFFN_CHARS = frozenset("0123456789+-.eE \t\x0b\x0c")


def decode_block(blk: dict, path: str, checks: Checks) -> tuple[np.ndarray, np.ndarray]:
    """x and y (file order, XFACTOR and YFACTOR applied) of the block's data record."""
    label, value, line = blk["data"]
    labels = blk["labels"]
    nl = value.find(b"\n")
    varlist = normalise_label(decode_text(value if nl < 0 else value[:nl]).split("$$")[0])
    body = b"" if nl < 0 else value[nl + 1:]
    xf = number(labels["XFACTOR"], "XFACTOR", path) if "XFACTOR" in labels else 1.0
    yf = number(labels["YFACTOR"], "YFACTOR", path) if "YFACTOR" in labels else 1.0
    for name, f in (("XFACTOR", xf), ("YFACTOR", yf)):
        if f == 0:
            raise SpectrumFormatError(f"##{name}=0 would make every value zero; fix the label",
                                      path=path, line=labels[name][1])
    shown = DATA_LABELS[label]
    if label == "XYDATA" and varlist == "(X++(Y..Y))":
        return _xydata(blk, body, line, xf, yf, path, checks)
    width = 2 if varlist in _POINT_FORMS else _PEAK_FORMS.get(varlist) if label != "XYDATA" \
        else None
    if width is None:
        forms = "(X++(Y..Y)) or (XY..XY)" if label == "XYDATA" else "(XY..XY)"
        raise SpectrumFormatError(f"##{shown}={varlist} is not supported; widgetkit reads "
                                  f"##{shown}={forms}", path=path, line=line)
    pts, first_tok, last_tok = _points(body, line + 1, path, width)
    npts = labels.get("NPOINTS")
    if npts is not None and whole_number(npts, "NPOINTS", path) != pts.shape[0]:
        raise SpectrumFormatError(f"##NPOINTS={npts[0]} but ##{shown}= holds {pts.shape[0]} "
                                  "points; the file is truncated or NPOINTS is wrong",
                                  path=path, line=npts[1])
    x, y = pts[:, 0] * xf, pts[:, 1] * yf
    for name, decoded, tok, f in (("FIRSTX", x[0], first_tok[0], xf),
                                  ("LASTX", x[-1], last_tok[0], xf),
                                  ("FIRSTY", y[0], first_tok[1], yf),
                                  ("LASTY", y[-1], last_tok[1], yf)):
        _check_written(labels, name, float(decoded), written_unit(tok) * abs(f), path, checks)
    return x, y


def _xydata(blk, body: bytes, line: int, xf: float, yf: float, path: str, checks: Checks):
    labels = blk["labels"]
    for need in ("FIRSTX", "LASTX", "NPOINTS"):
        if need not in labels:
            raise SpectrumFormatError(f"##XYDATA= needs ##{need}=, which is missing from "
                                      f"the block {blk['title']!r}", path=path, line=line)
    npts = labels["NPOINTS"]
    n = whole_number(npts, "NPOINTS", path)
    if not 2 <= n <= MAX_VALUES:
        raise SpectrumFormatError(f"##NPOINTS={n} is not a spectrum size (2 to {MAX_VALUES}); "
                                  "fix NPOINTS", path=path, line=npts[1])
    d = decode_xydata(body, line0=line + 1, path=path, max_values=n + body.count(b"\n") + 1,
                      ycheck=checks.mode, npoints=n)
    for at, before, after in d.ycheck_failures:
        checks.warnings.append(f"Y-check failed at line {at}: {after!r} starts the line, the "
                               f"line before ended with {before!r}; kept {after!r}")
    first = number(labels["FIRSTX"], "FIRSTX", path)
    last = number(labels["LASTX"], "LASTX", path)
    if first == last:
        raise SpectrumFormatError("##FIRSTX= equals ##LASTX=; x cannot be spaced", path=path,
                                  line=labels["LASTX"][1])
    if d.y.size != n:
        what = (f"##NPOINTS={n} but ##XYDATA= (lines {line + 1}-{int(d.line_number[-1])}) "
                f"holds {d.y.size} ordinates")
        count = d.y.size
        if checks.mode != "warn" or count < 2 or d.ycheck_failures or _line_x_off(
                d, first, (last - first) / (count - 1), xf)[0].any():
            raise SpectrumFormatError(
                f"{what}; the file is truncated or NPOINTS is wrong (checks='warn' reads the "
                "data only when every line X places them between FIRSTX and LASTX and every "
                "Y-check holds)",
                path=path, line=npts[1])
        checks.note(f"{what}; x placed from FIRSTX, LASTX and the {count} ordinates, which "
                    "every line X confirms")
        n = count
    dx = (last - first) / (n - 1)
    off = _check_line_x(d, first, dx, xf, labels, path, checks)
    _check_deltax(labels, first, last, n, dx, path, checks, line_x_ok=not off)
    y = d.y * yf
    for name, decoded in (("FIRSTY", y[0]), ("LASTY", y[-1])):
        _check_written(labels, name, float(decoded), abs(yf), path, checks)
    return np.linspace(first, last, n), y


def _line_x_off(d, first, dx, xf):
    """Which line X values disagree with FIRSTX + i dx; the expected x and the tolerance."""
    expected = first + d.line_first * dx
    tol = abs(dx) + d.line_x_step * abs(xf) + 1e-9 * max(abs(first), abs(expected[-1]))
    return np.abs(d.line_x * xf - expected) > tol, expected, tol


def _check_line_x(d, first, dx, xf, labels, path, checks) -> bool:
    """Every line's X (times XFACTOR) must be the x of its first ordinate, to within one
    spacing plus its written rounding. Returns True when a line was off."""
    off, expected, tol = _line_x_off(d, first, dx, xf)
    if not off.any():
        checks.results["line X"] = f"all {d.line_x.size} agree with FIRSTX, LASTX and NPOINTS"
        return False
    i = int(np.argmax(off))
    hint = ""
    if "DELTAX" in labels:
        given = number(labels["DELTAX"], "DELTAX", path)
        if np.all(np.abs(d.line_x * xf - (first + d.line_first * given)) <= tol):
            hint = (" (the line X values follow ##DELTAX instead: LASTX or NPOINTS is "
                    "wrong)")
    checks.results["line X"] = f"{int(off.sum())} of {off.size} disagree"
    checks.fail(f"the line starts at X={d.line_x[i] * xf!r} but its first ordinate is point "
                f"{int(d.line_first[i])}, at x={expected[i]!r} from FIRSTX, LASTX and NPOINTS"
                f"{hint}; a line is missing or the X values are wrong",
                int(d.line_number[i]))
    return True


def _check_deltax(labels, first, last, n, dx, path, checks, *, line_x_ok: bool) -> None:
    if "DELTAX" not in labels:
        return
    entry = labels["DELTAX"]
    given = number(entry, "DELTAX", path)
    units = [written_unit(number_and_rest(labels[k][0])[0]) for k in ("FIRSTX", "LASTX")]
    outcome = _agreement(number_and_rest(entry[0])[0], given, dx, sum(units) / (n - 1))
    if outcome:
        checks.results["DELTAX"] = outcome
        return
    msg = (f"##DELTAX={entry[0]} differs from (LASTX-FIRSTX)/(NPOINTS-1) = {dx!r} by more "
           "than its written digits")
    checks.results["DELTAX"] = "nominal (differs beyond its written digits)"
    if line_x_ok:  # x comes from FIRSTX, LASTX and NPOINTS, confirmed line by line
        checks.note(msg + "; x follows FIRSTX, LASTX and NPOINTS, which the line X values "
                    f"confirm (line {entry[1]})")
    else:
        checks.fail(msg, entry[1], "fix DELTAX, FIRSTX, LASTX or NPOINTS, or pass "
                    "checks='warn'")


def _agreement(text: str, written: float, decoded: float, quantum: float) -> str | None:
    """How a written value agrees with a computed one, or None when beyond its digits."""
    unit = written_unit(text)
    q = quantum + 4e-16 * max(abs(written), abs(decoded))
    if abs(written - decoded) <= 0.5 * unit + q:  # the writer rounded
        return "agrees"
    # the writer truncated toward zero: |decoded| lies in [|written|, |written| + unit)
    if (written == 0 or (written > 0) == (decoded > 0)) and (
            -q <= abs(decoded) - abs(written) <= unit + q):
        return "agrees to the written digits (truncated)"
    return None


def _check_written(labels, name: str, decoded: float, quantum: float, path: str,
                   checks: Checks) -> None:
    """Compare ``##NAME=`` with the decoded value to the digits written (plus ``quantum``)."""
    entry = labels.get(name)
    if entry is None:
        return
    written = number(entry, name, path)
    text = number_and_rest(entry[0])[0]
    unit = written_unit(text)
    diff = abs(written - decoded)
    outcome = _agreement(text, written, decoded, quantum)
    if outcome:
        checks.results[name] = outcome
        return
    checks.results[name] = f"differs by {diff:.3g} (beyond the written digits)"
    hint = ""
    yf = number(labels["YFACTOR"], "YFACTOR", path) if "YFACTOR" in labels else 1.0
    if name in ("FIRSTY", "LASTY") and yf not in (0.0, 1.0) and abs(
            written - decoded / yf) <= unit + 1.0:
        hint = " (it equals the value before YFACTOR: the writer left YFACTOR out)"
    checks.fail(f"##{name}={text} disagrees with the decoded value {decoded!r} by {diff:.3g}, "
                f"more than its written digits allow ({unit:g}){hint}", entry[1])


def _points(body: bytes, line0: int, path: str, width: int):
    """(x, y) pairs of a point list, and the written text of the first and last pair."""
    text = decode_text(body)
    if "$$" in text:
        text = "\n".join(ln.split("$$", 1)[0] for ln in split_lines(text))
    flat = text.translate(_SEPARATORS)
    toks = flat.split()
    vals = None
    if toks and _AFFN_CHARS.issuperset(flat.replace("\n", " ")):
        try:
            vals = np.array(toks, dtype=np.float64)
        except ValueError:
            vals = None
    if vals is None or not np.all(np.isfinite(vals)):
        vals = _careful_points(text, line0, path)
    if vals.size % width:
        raise SpectrumFormatError(f"the point list holds {vals.size} numbers, not groups of "
                                  f"{width}", path=path, line=line0)
    pts = vals.reshape(-1, width)[:, :2]
    return pts, toks[:2], toks[-width:][:2]


def _careful_points(text: str, line0: int, path: str) -> np.ndarray:
    """Token by token, naming the line of the first value that is not a finite number."""
    out: list[float] = []
    for k, ln in enumerate(split_lines(text), start=line0):
        for tok in ln.translate(_SEPARATORS).split():
            num, rest = number_and_rest(tok)
            if not num or rest:
                hint = " ('?' marks a missing value; replace it)" if "?" in tok else ""
                raise SpectrumFormatError(f"{tok[:30]!r} is not a number (AFFN) in the point "
                                          f"list{hint}", path=path, line=k)
            v = float(num)
            if not np.isfinite(v):
                raise SpectrumFormatError(f"{tok[:30]!r} is not a finite number in the point "
                                          "list", path=path, line=k)
            out.append(v)
    if not out:
        raise SpectrumFormatError("the point list holds no values", path=path, line=line0)
    return np.array(out, np.float64)
