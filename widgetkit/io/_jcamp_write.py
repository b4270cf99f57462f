"""The JCAMP-DX writer (JCAMP-DX 4.24: McDonald and Wilks, Applied Spectroscopy 42 (1988)
151; files that 5.01 readers (Lampen et al., Applied Spectroscopy 48 (1994) 1545) accept)."""

from __future__ import annotations

import math

import numpy as np

from ..errors import SpectrumFormatError
from ..spectrum import Spectrum
from ._common import absolute_path, atomic_write
from .asdf_encode import encode_affn_lines, encode_difdup_lines

__all__ = ["write_jcamp", "yfactor_for"]


_YUNITS = {"absorbance": "ABSORBANCE", "transmittance": "TRANSMITTANCE",
           "intensity": "ARBITRARY UNITS"}


def _one_line(s) -> str:
    return " ".join(str(s).replace("$$", "$ $").split())


def _is_raman(meta) -> bool:
    return (meta.get("x_axis") == "raman_shift" or meta.get("technique") == "raman"
            or "raman" in str(meta.get("x_label", "")).lower())


def _typed_labels(meta) -> list[str]:
    """##RESOLUTION= and ##STATE= from the typed metadata (JCAMP-DX 4.24 optional labels)."""
    out = []
    r = meta.get("resolution")
    if isinstance(r, (int, float)) and not isinstance(r, bool) and math.isfinite(r) and r > 0:
        out.append(f"##RESOLUTION={float(r)!r}")
    state = meta.get("sample_state")
    if state in ("gas", "liquid", "solid"):
        out.append(f"##STATE={state.upper()}")
    return out


def _yunits(spectrum: Spectrum) -> str:
    """The file's own y unit when it names the same kind (an absorption coefficient stays
    one), else the plain word for the kind; never a percent label (y is a fraction)."""
    from ._labels import parse_y_label

    unit = spectrum.meta.get("y_unit")
    if isinstance(unit, str) and unit.strip():
        kind, percent, _quantity = parse_y_label(unit)
        if kind == spectrum.y_kind and not percent:
            return _one_line(unit)
    return _YUNITS[spectrum.y_kind]


def yfactor_for(y: np.ndarray, digits: int = 7) -> float:
    """A power of ten that keeps ``digits`` significant digits of the largest |y|:
    10**(floor(log10(max|y|)) - digits + 1) (at least 1e-300), or 1 when y is all zero."""
    m = float(np.max(np.abs(y))) if y.size else 0.0
    if m == 0.0:
        return 1.0
    # clamped so that the factor stays a normal float for the tiniest data
    return float(f"1e{max(math.floor(math.log10(m)) - digits + 1, -300)}")


def write_jcamp(spectrum: Spectrum, path, *, form: str = "DIFDUP", title: str | None = None,
                origin: str | None = None, owner: str | None = None,
                data_type: str | None = None) -> str:
    """Write a spectrum as a JCAMP-DX 4.24 file (McDonald and Wilks 1988; read by 5.01 readers).

    Parameters
    ----------
    spectrum : Spectrum
    path : str or path-like
    form : {"DIFDUP", "AFFN", "XYPOINTS"}
        ``"DIFDUP"``: ``##XYDATA=(X++(Y..Y))`` with integer ordinates in DIF form with DUP
        runs and the Y-check; YFACTOR is a power of ten keeping 7 significant digits of the
        largest |y| (:func:`yfactor_for`), so each y changes by at most YFACTOR/2.
        ``"AFFN"``: the same record with every y in full precision (YFACTOR=1, exact).
        Both need evenly spaced x (within 1e-6 of the spacing): a reader rebuilds x from
        FIRSTX, LASTX and NPOINTS, which gives back x made by ``numpy.linspace`` exactly and
        other evenly spaced x to within that tolerance. ``"XYPOINTS"``:
        ``##XYPOINTS=(XY..XY)``, one exact x,y pair per line, for any x.
    title, origin, owner, data_type : str, optional
        ``##TITLE=`` (default ``meta["title"]``), ``##ORIGIN=``, ``##OWNER=`` (default
        "widgetkit" and "unknown"), ``##DATA TYPE=`` (default INFRARED SPECTRUM, or RAMAN
        SPECTRUM for a Raman spectrum: ``meta["x_axis"] == "raman_shift"`` or
        ``meta["technique"] == "raman"``).

    Notes
    -----
    The typed metadata are written as JCAMP-DX labels so that they read back:
    ``meta["resolution"]`` as ``##RESOLUTION=`` (cm⁻¹), ``meta["sample_state"]`` as
    ``##STATE=``. ``##YUNITS=`` keeps the file's own y unit when it names the same kind (an
    absorption coefficient stays one), else ABSORBANCE, TRANSMITTANCE (a fraction) or
    ARBITRARY UNITS.

    Returns
    -------
    str
        The absolute path written (atomically: temporary file, then rename).
    """
    if not isinstance(form, str) or form.upper() not in ("DIFDUP", "AFFN", "XYPOINTS"):
        raise SpectrumFormatError(f"form must be 'DIFDUP', 'AFFN' or 'XYPOINTS', got {form!r}")
    form = form.upper()
    x, y = spectrum.x, spectrum.y
    n = x.size
    meta = spectrum.meta
    jc = meta.get("jcamp") or {}
    if data_type is None:
        data_type = jc.get("datatype") or ("RAMAN SPECTRUM" if _is_raman(meta)
                                           else "INFRARED SPECTRUM")
    head = [
        f"##TITLE={_one_line(title if title is not None else meta.get('title') or 'spectrum')}",
        "##JCAMP-DX=4.24 $$ widgetkit",
        f"##DATA TYPE={_one_line(data_type)}",
        f"##ORIGIN={_one_line(origin or jc.get('origin') or 'widgetkit')}",
        f"##OWNER={_one_line(owner or jc.get('owner') or 'unknown')}",
    ]
    head += _typed_labels(meta)
    head += ["##XUNITS=1/CM", f"##YUNITS={_yunits(spectrum)}"]
    if form == "XYPOINTS":
        body = [f"##NPOINTS={n}", "##XYPOINTS=(XY..XY)"]
        body += [f"{a!r}, {b!r}" for a, b in zip(x.tolist(), y.tolist(), strict=True)]
    else:
        dx = (x[-1] - x[0]) / (n - 1)
        dev = float(np.max(np.abs(x - np.linspace(x[0], x[-1], n))))
        if dev > 1e-6 * abs(dx):
            raise SpectrumFormatError(
                f"form={form!r} needs evenly spaced x, but x departs by up to {dev!r} cm-1 "
                f"from even spacing {dx!r}; use form='XYPOINTS' or resample first")
        xs = x.tolist()

        def x_of(i: int) -> str:  # the line X is a check value: 12 digits are plenty
            return f"{xs[i]:.12g}"

        if form == "AFFN":
            yf = 1.0
            yq = y
            lines = encode_affn_lines([repr(v) for v in y.tolist()], x_of)
        else:
            yf = yfactor_for(y)
            ints = np.rint(y / yf).astype(np.int64)
            yq = ints * yf
            lines = encode_difdup_lines(ints, x_of)
        yf_text = "1" if yf == 1.0 else f"{yf:.0E}"
        body = ["##XFACTOR=1", f"##YFACTOR={yf_text}", f"##FIRSTX={xs[0]!r}",
                f"##LASTX={xs[-1]!r}", f"##DELTAX={float(dx)!r}", f"##MINY={float(yq.min())!r}",
                f"##MAXY={float(yq.max())!r}", f"##NPOINTS={n}", f"##FIRSTY={float(yq[0])!r}",
                "##XYDATA=(X++(Y..Y))"] + lines
    apath = absolute_path(path)
    atomic_write(apath, ("\n".join(head + body + ["##END="]) + "\n").encode("utf-8"))
    return apath
