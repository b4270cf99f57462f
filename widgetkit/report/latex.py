"""The LaTeX rendering of a report: booktabs rules in ``longtable`` tables, pure ASCII.

The report's Unicode text (cm⁻¹, σ, ν₀, H³⁵Cl, ±, −) is written as LaTeX:
Greek letters and operators in math mode, superscript and subscript runs as
``$^{...}$`` and ``$_{...}$`` (so ``cm⁻¹`` becomes ``cm$^{-1}$`` and ``H³⁵Cl``
becomes ``H$^{35}$Cl``), and numbers in the uncertainty notation in math mode
(``$2885.977(3)$``, ``$6.67(15)\\times10^{-11}$``). The file needs only the
packages booktabs, longtable, graphicx and geometry.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from .data import ReportData
from .render import report_blocks

__all__ = ["render_latex", "tex_escape"]

_TEX_SPECIAL = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                "^": r"\textasciicircum{}", "`": r"\textasciigrave{}"}
_SUPER = dict(zip("⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺ᵀ", "0123456789-+T"))
_SUB = dict(zip("₀₁₂₃₄₅₆₇₈₉", "0123456789"))
_MATH = {"σ": r"\sigma", "γ": r"\gamma", "ν": r"\nu", "χ": r"\chi", "λ": r"\lambda",
         "α": r"\alpha", "ω": r"\omega", "ρ": r"\rho", "μ": r"\mu", "π": r"\pi", "Δ": r"\Delta",
         "Σ": r"\Sigma", "η": r"\eta", "θ": r"\theta", "±": r"\pm", "×": r"\times", "−": "-",
         "≤": r"\leq", "≥": r"\geq", "≈": r"\approx", "∝": r"\propto", "·": r"\cdot",
         "½": r"\frac{1}{2}", "′": r"'", "″": r"''", "√": r"\surd"}
_TEXT = {"–": "--", "—": "---", "“": "``", "”": "''", "‘": "`", "’": "'", "…": r"\ldots{}",
         "Å": r"\AA{}", "ö": r'\"o', "é": r"\'e", "✔": "ok", "\u00a0": "~"}
_NUMBER = re.compile(r"^[-+−]?\d+(?:\.\d*)?(?:\(\d+\))?(?:e[-+]?\d+)?$")


def tex_escape(text: str) -> str:
    """Escape LaTeX specials and write the report's non-ASCII symbols as LaTeX (pure ASCII
    out; a character with no LaTeX form here becomes ``?``). Neighbouring math pieces are
    joined (``σ²`` -> ``$\\sigma^{2}$``)."""
    parts: list[tuple[bool, str]] = []  # (math?, text)
    i, s = 0, str(text)
    while i < len(s):
        ch = s[i]
        for table, fmt in ((_SUPER, "^{%s}"), (_SUB, "_{%s}")):
            if ch in table:
                j = i
                while j < len(s) and s[j] in table:
                    j += 1
                parts.append((True, fmt % "".join(table[c] for c in s[i:j])))
                i = j
                break
        else:
            if ch in _MATH:
                parts.append((True, _MATH[ch] + (" " if _MATH[ch][-1:].isalpha() else "")))
            else:
                parts.append((False, _TEX_SPECIAL.get(ch) or _TEXT.get(ch)
                              or (ch if ord(ch) < 128 else "?")))
            i += 1
    out, k = [], 0
    while k < len(parts):
        if not parts[k][0]:
            out.append(parts[k][1])
            k += 1
            continue
        j = k
        while j < len(parts) and parts[j][0]:
            j += 1
        out.append("$" + "".join(p for _, p in parts[k:j]).rstrip() + "$")
        k = j
    return "".join(out)


def _breakable(text: str, every: int = 12) -> str:
    """Escaped text that may break inside long unspaced runs (hashes, times, paths)."""
    pieces = []
    for word in text.split(" "):
        iso_time = re.match(r"^(\d{4}-\d\d-\d\dT)([^+Z]*)(.*)$", word)
        if iso_time:  # a date, a time, a zone: may break between them
            pieces.append(r"\allowbreak{}".join(tex_escape(p) for p in iso_time.groups() if p))
            continue
        if len(word) > 2 * every:
            word = r"\allowbreak{}".join(tex_escape(word[i:i + every])
                                         for i in range(0, len(word), every))
        else:
            word = tex_escape(word)
        pieces.append(word)
    return " ".join(pieces)


def _tex_cell(text: str) -> str:
    if _NUMBER.match(text):
        t = text.replace("−", "-")
        mant, _, exp = t.partition("e")
        return f"${mant}\\times10^{{{int(exp)}}}$" if exp else f"${mant}$"
    return _breakable(text)


def _code_cell(text: str) -> str:
    return r"\texttt{\small " + _breakable(text) + "}"


#: tables with this many columns or more are set smaller and tighter to fit the page:
#: (columns, font size, column separation)
WIDE = ((13, "scriptsize", "1.5pt"), (7, "footnotesize", "3pt"))


def _tex_table(head: list[str], rows: list[list[str]], code: tuple = (),
               widths: dict | None = None) -> str:
    widths = widths or {}
    numeric = [bool(rows) and all(_NUMBER.match(r[i]) or r[i] == "–" for r in rows)
               for i in range(len(head))]
    spec = "".join(f"p{{{widths[i]}cm}}" if i in widths else "r" if n
                   else ("p{4.5cm}" if i in code else "l") for i, n in enumerate(numeric))
    out = [f"\\begin{{longtable}}{{{spec}}}", "\\toprule",
           " & ".join(tex_escape(h) for h in head) + r" \\", "\\midrule", "\\endhead",
           "\\bottomrule", "\\endfoot"]
    out += [" & ".join(_code_cell(c) if i in code else _tex_cell(c) for i, c in enumerate(r))
            + r" \\" for r in rows]
    out.append("\\end{longtable}")
    for n, size, sep in WIDE:
        if len(head) >= n:
            out = [f"{{\\{size}\\setlength{{\\tabcolsep}}{{{sep}}}", *out, "}"]
            break
    return "\n".join(out)


def render_latex(data: ReportData, *, figures: Mapping[str, str] | None = None,
                 standalone: bool = True) -> str:
    """The report as LaTeX with booktabs rules in ``longtable`` tables.

    ``standalone=True`` wraps it in a complete ``article`` document (packages
    booktabs, longtable, graphicx, geometry); otherwise it is a fragment to
    ``\\input``. ``figures`` maps figure names to image files for ``\\includegraphics``.
    """
    out = []
    if standalone:
        out += [r"\documentclass[10pt]{article}", r"\usepackage[T1]{fontenc}",
                r"\usepackage[margin=2cm]{geometry}",
                r"\usepackage{booktabs}", r"\usepackage{longtable}", r"\usepackage{graphicx}",
                r"\begin{document}"]
    for b in report_blocks(data, figures=figures):
        if b.kind == "title":
            out.append(f"\\section*{{{tex_escape(b.text)}}}")
        elif b.kind == "heading":
            out += ["", f"\\subsection*{{{tex_escape(b.text)}}}"]
        elif b.kind == "para":
            text = _breakable(b.text, every=20)
            out += ["", f"\\textbf{{{text}}}" if b.tone in ("bad", "warn") else text]
        elif b.kind == "bullets":
            out += ["", r"\begin{itemize}"] + [r"\item " + _breakable(i, every=20) for i in b.items]
            out.append(r"\end{itemize}")
        elif b.kind == "table":
            out += ["", _tex_table(b.head, b.items, b.code, b.widths)]
        elif b.kind == "figures":
            for name, path in b.items:
                out += ["", r"\begin{figure}[h]\centering",
                        f"\\includegraphics[width=\\textwidth]{{{path}}}",
                        f"\\caption{{{tex_escape(name)}}}", r"\end{figure}"]
    if standalone:
        out.append(r"\end{document}")
    return "\n".join(out) + "\n"
