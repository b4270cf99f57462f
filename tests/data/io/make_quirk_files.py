"""Write the reader test files that mimic quirks of real-world exports (lr16 ... lr21).

Run ``python tests/data/io/make_quirk_files.py`` from the repository root; the files are
rewritten byte for byte. The spectra come from widgetkit's simulator (CO constants of
:data:`widgetkit.simulate.HANDBOOK`) or are invented shapes; the samples, the "Larkspur Ridge
bench lab" and its instruments are invented. Each file is laid out by the JCAMP-DX rules
(McDonald and Wilks, Applied Spectroscopy 42 (1988) 151; Lampen et al., Applied Spectroscopy 48
(1994) 1545) and then given one habit of real exports that the standard allows or that
readers meet in practice:

* lr16: a gas-phase quantitative reference: absorption coefficients in
  (micromol/mol)-1 m-1 (base 10), ##FIRSTY and ##LASTY truncated to 3 significant digits,
  ##STATE=GAS, ##RESOLUTION=0.125, private ``##$`` labels, line X values with 4 decimals.
* lr17: a Fourier-transform grid whose ##DELTAX is the nominal 0.125 while FIRSTX, LASTX and
  NPOINTS give 0.1205...; the line X values follow FIRSTX, LASTX and NPOINTS.
* lr18: a Raman export ``##XYDATA=(XY..XY)``, Stokes and anti-Stokes shifts, UTF-8 byte-order
  mark, CR LF line ends and ``##JCAMP-DX=`` before ``##TITLE=``.
* lr19: a thin-film transmittance (fraction) that peaks at 1.505 from interference fringes.
* lr20: a delimited Raman export with quoted column names and header fields.
* lr21: a CSV whose quoted x column name holds a line break.

lr26_micrometre_survey.jdx is written by hand (a continued ##OWNER= label, x in micrometres
times XFACTOR, AFFN ordinates).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

HERE = Path(__file__).parent


def _co_band(x: np.ndarray) -> np.ndarray:
    import widgetkit as wk
    from widgetkit.simulate import HANDBOOK

    s = wk.simulate.rovibrational(wk.Diatomic("12C", "16O"), HANDBOOK["12C-16O"], x=x,
                                  temperature=296.0, strength=0.5, lorentz_hwhm=0.05,
                                  resolution=0.125, noise=0.0, y_kind="absorbance")
    return np.asarray(s.y)


def _difdup(ints: np.ndarray, xs: list[str]) -> list[str]:
    from widgetkit.io.asdf import encode_difdup_lines

    return encode_difdup_lines(ints, lambda i: xs[i], width=80)


def _truncate(v: float, digits: int) -> str:
    """``v`` truncated (not rounded) to ``digits`` significant digits, E notation."""
    e = math.floor(math.log10(abs(v)))
    m = math.trunc(abs(v) / 10 ** (e - digits + 1)) / 10 ** (digits - 1)
    return f"{'-' if v < 0 else ''}{m:.{digits - 1}f}E{e:+03d}"


def lr16() -> None:
    n = 1601
    x = np.linspace(2100.0, 2200.0, n)
    yf = 1e-12
    y = 4.096e-8 + _co_band(x) * 2.5e-5  # absorption coefficient scale (invented)
    ints = np.rint(y / yf).astype(np.int64)
    xs = [f"{v:.4f}" for v in x.tolist()]
    head = [
        "##TITLE=LR-16 carbon monoxide reference, 1 ppm-m (simulated)",
        "##JCAMP-DX=4.24", "##DATA TYPE=INFRARED SPECTRUM",
        "##ORIGIN=Larkspur Ridge bench lab (invented); simulated by widgetkit",
        "##OWNER=widgetkit test data (invented), free to use",
        "##CAS REGISTRY NO=630-08-0", "##MOLFORM=C O", "##STATE=GAS",
        "##$LR PATH LENGTH=1 M", "##$LR TEMPERATURE=296 K", "##RESOLUTION=0.125",
        "##XUNITS=1/CM", "##YUNITS=(MICROMOL/MOL)-1M-1 (BASE 10)", "##XFACTOR=1.0",
        "##YFACTOR=1.0E-12", f"##DELTAX={x[1] - x[0]:.6f}", f"##FIRSTX={x[0]:.4f}",
        f"##LASTX={x[-1]:.4f}", f"##FIRSTY={_truncate(ints[0] * yf, 3)}",
        f"##LASTY={_truncate(ints[-1] * yf, 3)}", f"##MAXY={_truncate(ints.max() * yf, 3)}",
        f"##MINY={_truncate(ints.min() * yf, 3)}", f"##NPOINTS={n}", "##XYDATA=(X++(Y..Y))",
    ]
    text = "\n".join(head + _difdup(ints, xs) + ["##END="]) + "\n"
    (HERE / "lr16_gas_coefficients.jdx").write_text(text, encoding="ascii")


def lr17() -> None:
    # a Fourier-transform grid: 7898.8 / 65536 cm-1 per point (invented laser and size)
    dx = 7898.8 / 65536
    n = 830
    x0 = 2050.0 + 0.5 * dx
    x = x0 + dx * np.arange(n)
    y = 0.02 + _co_band(x)
    yf = 1e-6
    ints = np.rint(y / yf).astype(np.int64)
    xs = [f"{v:.3f}" for v in x.tolist()]
    head = [
        "##TITLE=LR-17 carbon monoxide, FT grid (simulated)", "##JCAMP-DX=5.01",
        "##DATA TYPE=INFRARED SPECTRUM",
        "##ORIGIN=Larkspur Ridge bench lab (invented); simulated by widgetkit",
        "##OWNER=widgetkit test data (invented), free to use", "##XUNITS=1/CM",
        "##YUNITS=ABSORBANCE", "##RESOLUTION=0.5", "##XFACTOR=1", "##YFACTOR=1E-06",
        f"##FIRSTX={float(x[0])!r}", f"##LASTX={float(x[-1])!r}", "##DELTAX=0.125",
        f"##FIRSTY={ints[0] * yf:.6f}", f"##NPOINTS={n}", "##XYDATA=(X++(Y..Y))",
    ]
    text = "\n".join(head + _difdup(ints, xs) + ["##END="]) + "\n"
    (HERE / "lr17_nominal_deltax.jdx").write_text(text, encoding="ascii")


def _raman_bands(shift: np.ndarray) -> np.ndarray:
    """Invented Lorentzian bands at ±(459, 775, 1230) cm-1, anti-Stokes weaker."""
    y = np.full(shift.shape, 120.0)
    for pos, height in ((459.0, 9000.0), (775.0, 2500.0), (1230.0, 1200.0)):
        for sign, scale in ((1.0, 1.0), (-1.0, math.exp(-1.4388 * pos / 296.0))):
            y += height * scale / (1.0 + ((shift - sign * pos) / 6.0) ** 2)
    return y


def lr18() -> None:
    shift = np.linspace(-800.0, 1400.0, 551)
    y = np.round(_raman_bands(shift), 1)
    head = ["##JCAMP-DX=5.01", "##TITLE=LR-18 liquid sample, 532 nm excitation (invented)",
            "##DATA TYPE=RAMAN SPECTRUM",
            "##ORIGIN=Larkspur Ridge bench lab (invented)",
            "##OWNER=widgetkit test data (invented), free to use", "##STATE=LIQUID",
            "##RESOLUTION=4 CM-1", "##XUNITS=1/CM", "##YUNITS=ARBITRARY UNITS",
            f"##FIRSTX={shift[0]:.1f}", f"##LASTX={shift[-1]:.1f}", f"##FIRSTY={y[0]:.1f}",
            f"##LASTY={y[-1]:.1f}", f"##NPOINTS={shift.size}", "##XYDATA=(XY..XY)"]
    rows = [f"{a:.1f}, {b:.1f}" for a, b in zip(shift.tolist(), y.tolist(), strict=True)]
    text = "\r\n".join(head + rows + ["##END="]) + "\r\n"
    (HERE / "lr18_raman_xy.jdx").write_bytes(b"\xef\xbb\xbf" + text.encode("ascii"))


def lr19() -> None:
    x = np.linspace(1000.0, 1300.0, 301)
    fringes = 1.25 + 0.255 * np.cos(2 * np.pi * (x - 1000.0) / 150.0)  # invented film
    y = np.round(fringes * (1 - 0.6 * np.exp(-((x - 1150.0) / 8.0) ** 2)), 4)
    head = ["##TITLE=LR-19 polymer film on a window (invented)", "##JCAMP-DX=4.24",
            "##DATA TYPE=INFRARED SPECTRUM", "##ORIGIN=Larkspur Ridge bench lab (invented)",
            "##OWNER=widgetkit test data (invented), free to use", "##STATE=SOLID",
            "##XUNITS=1/CM", "##YUNITS=TRANSMITTANCE", "##XFACTOR=1", "##YFACTOR=0.0001",
            "##FIRSTX=1000", "##LASTX=1300", "##DELTAX=1", f"##NPOINTS={x.size}",
            "##XYDATA=(X++(Y..Y))"]
    ints = np.rint(y / 1e-4).astype(np.int64)
    text = "\n".join(head + _difdup(ints, [f"{v:.0f}" for v in x.tolist()]) + ["##END="])
    (HERE / "lr19_film_transmittance.jdx").write_text(text + "\n", encoding="ascii")


def lr20() -> None:
    shift = np.linspace(-300.0, 1300.0, 161)
    y = np.round(_raman_bands(shift), 2)
    lines = ['"Sample";"LR-20 invented powder"', '"Laser";"785 nm"', '"Resolution";"2 cm-1"',
             '"Raman Shift (cm-1)";"Intensity (counts)"']
    lines += [f"{a:.1f};{b:.2f}" for a, b in zip(shift.tolist(), y.tolist(), strict=True)]
    (HERE / "lr20_raman_export.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


def lr21() -> None:
    x = np.linspace(2100.0, 2104.0, 9)
    lines = ['# title: LR-21 quoted names', '"Wavenumber', '(cm-1)","Absorbance"']
    lines += [f"{a:.1f},{0.1 + 0.01 * k:.2f}" for k, a in enumerate(x.tolist())]
    (HERE / "lr21_quoted_break.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")


if __name__ == "__main__":
    for make in (lr16, lr17, lr18, lr19, lr20, lr21):
        make()
