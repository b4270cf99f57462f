"""What the words of a file say: axis and column labels, y units, and the typed metadata
every reader fills (resolution, sample state, technique, Raman shift axis).

Every function here runs in time linear in its input: labels are scanned with ``str``
methods and single passes, never with regular expressions that can backtrack (a header line
of 16 kB or more must not take seconds).

Typed metadata keys (set only when the file says so; consumers treat each as optional):

``resolution``
    float, cm⁻¹: JCAMP-DX ``##RESOLUTION=`` or a header line ``resolution: 0.5 cm-1``.
``sample_state``
    ``"gas"``, ``"liquid"`` or ``"solid"``: JCAMP-DX ``##STATE=`` or a header line ``state:``.
``technique``
    ``"infrared"`` or ``"raman"``: JCAMP-DX ``##DATA TYPE=``, the axis or y label, or a header
    line ``technique:``.
``x_axis``
    ``"raman_shift"`` when x is a Raman shift (Stokes positive, anti-Stokes negative) rather
    than an absolute wavenumber: JCAMP-DX ``##XUNITS=1/CM`` with ``##DATA TYPE=RAMAN
    SPECTRUM``, or an x label such as ``Raman shift (cm-1)``.
"""

from __future__ import annotations

from typing import Any

from ..units import normalise_x_unit

__all__ = ["parse_x_label", "parse_y_label", "bracketed", "number_and_rest", "written_unit",
           "resolution_cm1", "sample_state", "technique_of", "header_fields"]

_OPEN, _CLOSE = "([{", ")]}"
_X_WORDS = (("raman shift", "cm-1"), ("wavenumber", "cm-1"), ("wave number", "cm-1"),
            ("shift", "cm-1"), ("δ", "cm-1"), ("wavelength", None), ("frequency", None),
            ("lambda", None))
_SHIFT_WORDS = ("raman shift", "shift", "δ", "delta")
#: y label words that mean an absorbance-like quantity (linear in absorbance): absorption
#: coefficients and cross sections as tabulated in quantitative reference spectra
_ABSORBANCE_LIKE = ("absorptiv", "absorption coef", "attenuation coef", "cross section",
                    "cross-section", "crosssection", "cm2/molec", "cm^2/molec", "cm²/molec",
                    "base 10", "base e", "log(1/t)", "log(1/r)", "log 1/t", "optical density")


def bracketed(text: str) -> list[str]:
    """Contents of the innermost bracket pairs, in order, in one pass.

    ``"Absorbance (base 10) [a.u.]" -> ["base 10", "a.u."]``; a bracket that is never closed
    is ignored (``"((((x"`` gives ``[]``), so the scan stays linear on any input.
    """
    out: list[str] = []
    start = -1
    for i, ch in enumerate(text):
        if ch in _OPEN:
            start = i
        elif ch in _CLOSE and start >= 0:
            out.append(text[start + 1:i].strip())
            start = -1
    return out


def _after_slash(low: str) -> str | None:
    """``"wavelength / nm" -> "nm"`` when the part before the slash is a word label."""
    i = low.find("/")
    if i <= 0:
        return None
    left, right = low[:i].strip(), low[i + 1:].strip()
    if not left or not right or not (left[0].isalpha()):
        return None
    if not all(c.isalnum() or c in " .'-_" for c in left):
        return None
    return right


def parse_x_label(label: str | None) -> tuple[str | None, str | None]:
    """Unit and quantity named by an x column label.

    ``"Wavenumber (cm-1)" -> ("cm-1", "wavenumber")``, ``"wavelength / nm" -> ("nm",
    "wavelength")``, ``"Raman shift (cm-1)" -> ("cm-1", "raman shift")``,
    ``"wavelength" -> (None, "wavelength")`` (a quantity without unit), ``"x" -> (None, None)``.
    """
    if not label:
        return None, None
    low = label.strip().lower()
    quantity = next((w for w, _ in _X_WORDS if w in low), None)
    if quantity == "δ":
        quantity = "raman shift"
    candidates = bracketed(low)
    slash = _after_slash(low)
    if slash is not None:
        candidates.append(slash)
    words = low.split()
    candidates += [low, words[-1] if words else low]
    for c in candidates:
        c = c.replace("rel.", "").replace("relative", "").strip()
        if len(c) > 40:  # no unit is that long; skip the conversion attempt
            continue
        try:
            return normalise_x_unit(c), quantity
        except ValueError:
            continue
    default = next((u for w, u in _X_WORDS if w == quantity), None)
    return default, quantity


def parse_y_label(label: str | None) -> tuple[str | None, bool | None, str | None]:
    """What a y column label or ``##YUNITS=`` says: ``(y_kind, percent, quantity)``.

    ``percent`` is True for "%" or "percent", False for "(fraction)", else None.
    ``"Transmittance (%)" -> ("transmittance", True, "transmittance")``,
    ``"Absorbance" -> ("absorbance", None, "absorbance")``, ``"Intensity (counts)" ->
    ("intensity", None, "intensity")``, ``"Reflectance" -> ("intensity", None,
    "reflectance")``, ``"(micromol/mol)-1m-1 (base 10)" -> ("absorbance", None, "absorption
    coefficient")`` (absorption coefficients and cross sections are proportional to
    absorbance, so they are read as absorbance and named in ``quantity``).
    """
    if not label:
        return None, None, None
    low = " ".join(label.strip().lower().split())
    percent = True if ("%" in low or "percent" in low) else (
        False if "fraction" in low else None)
    if "absorb" in low and "coef" not in low and "absorptiv" not in low:
        return "absorbance", percent, "absorbance"
    if "transmi" in low or low.replace(" ", "") in ("%t", "t%", "t(%)"):
        return "transmittance", percent, "transmittance"
    if "reflect" in low:
        return "intensity", percent, "reflectance"
    if any(w in low for w in _ABSORBANCE_LIKE) or ("mol" in low and "-1" in low):
        quantity = ("cross section" if "cross" in low or "molec" in low
                    else "absorption coefficient")
        return "absorbance", None, quantity
    for word in ("intens", "count", "raman", "emission", "signal", "a.u", "arb", "cps",
                 "radiance", "single beam", "scattering"):
        if word in low:
            return "intensity", percent, "intensity"
    return None, percent, None


def number_and_rest(text: str) -> tuple[str, str]:
    """The leading decimal number of ``text`` (as written) and what follows it.

    ``"0.125 cm-1" -> ("0.125", "cm-1")``, ``"4.09E-08" -> ("4.09E-08", "")``,
    ``"abc" -> ("", "abc")``. One pass; the number is ``[+-]digits[.digits][(e|E)[+-]digits]``.
    """
    s = text.strip()
    n = len(s)
    i = 0
    if i < n and s[i] in "+-":
        i += 1
    d0 = i
    while i < n and s[i].isdigit() and s[i].isascii():
        i += 1
    digits = i - d0
    if i < n and s[i] == ".":
        i += 1
        f0 = i
        while i < n and s[i].isdigit() and s[i].isascii():
            i += 1
        digits += i - f0
    if digits == 0:
        return "", s
    if i < n and s[i] in "eE":
        j = i + 1
        if j < n and s[j] in "+-":
            j += 1
        k = j
        while k < n and s[k].isdigit() and s[k].isascii():
            k += 1
        if k > j:
            i = k
    return s[:i], s[i:].strip()


def written_unit(number: str) -> float:
    """One unit in the last digit of a decimal number as written.

    ``"4.09E-08" -> 1e-10``, ``"0.125" -> 0.001``, ``"2000" -> 1.0``, ``"1.5e3" -> 100.0``.
    A value that agrees with a computed one to within this unit agrees "to the written
    digits", whether the writer rounded or truncated.
    """
    s = number.strip().lower()
    exp = 0
    if "e" in s:
        s, e = s.split("e", 1)
        try:
            exp = int(e)
        except ValueError:
            exp = 0
    decimals = len(s.split(".", 1)[1]) if "." in s else 0
    return 10.0 ** max(min(exp - decimals, 300), -300)


def resolution_cm1(text: str, x_unit: str | None) -> float | None:
    """Resolution in cm⁻¹ from a ``##RESOLUTION=`` value or header field, or None.

    ``"0.125" -> 0.125`` (in the x unit, which must be cm⁻¹), ``"0.5 cm-1" -> 0.5``,
    ``"4 1/CM" -> 4.0``. A value in another unit (nm, µm) is not a single wavenumber width
    and gives None, as does a value that is not a positive finite number.
    """
    num, rest = number_and_rest(text)
    if not num:
        return None
    value = float(num)
    if not (value > 0 and value < 1e6):
        return None
    unit = rest.split(";")[0].split(",")[0].strip()
    if unit:
        try:
            unit = normalise_x_unit(unit.split()[0])
        except ValueError:
            return None
    else:
        unit = x_unit or "cm-1"
    return value if unit == "cm-1" else None


def sample_state(text: str) -> str | None:
    """``"gas"``, ``"liquid"`` or ``"solid"`` from a ``##STATE=`` value or header field."""
    low = text.strip().lower()
    for words, state in ((("gas", "vapor", "vapour"), "gas"),
                         (("liquid", "solution", "melt"), "liquid"),
                         (("solid", "film", "crystal", "powder", "pellet", "kbr", "mull",
                           "glass"), "solid")):
        if any(w in low for w in words):
            return state
    return None


def technique_of(*texts: str | None) -> str | None:
    """``"raman"`` or ``"infrared"`` when one of the texts names it (first match wins)."""
    for text in texts:
        if not text:
            continue
        low = text.lower()
        if "raman" in low:
            return "raman"
        if "infrared" in low or "ftir" in low or "ft-ir" in low:
            return "infrared"
        if any(w.strip(".,;:()[]") in ("ir", "nir", "mir", "fir") for w in low.split()):
            return "infrared"
    return None


def header_fields(lines: list[str]) -> dict[str, str]:
    """Key-value fields of header and comment lines, keys lower-case (the first occurrence of
    a key wins): ``key: value``, ``key = value``, or a line of exactly two cells separated by
    a tab, semicolon or comma (double quotes removed).

    ``["# Resolution: 0.5 cm-1", '"Laser";"785 nm"'] -> {"resolution": "0.5 cm-1",
    "laser": "785 nm"}``.
    """
    out: dict[str, Any] = {}
    for line in lines:
        s = line.strip().lstrip("#").strip()
        cut = min((i for i in (s.find(":"), s.find("=")) if i > 0), default=-1)
        if cut > 0:
            key, value = s[:cut], s[cut + 1:]
        else:
            for sep in ("\t", ";", ","):
                cells = s.split(sep)
                if len(cells) == 2:
                    key, value = cells
                    break
            else:
                continue
        key = " ".join(key.strip().strip('"').lower().split())
        if not key or len(key) > 40:
            continue
        out.setdefault(key, value.strip().strip('"').strip())
    return out
