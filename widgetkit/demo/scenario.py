"""The demo scenario: an invented laboratory, invented samples, simulated spectra.

Everything here is made up for teaching and testing: the institute, the group,
the cell, the sample codes and the instrument settings. The spectra themselves
are computed by :mod:`widgetkit.simulate` from published molecular constants
(:data:`widgetkit.simulate.HANDBOOK`), with invented noise and baselines, by
:mod:`widgetkit.demo.make_data`.
"""

from __future__ import annotations

__all__ = ["LAB", "SAFETY_NOTE", "SAMPLES", "SCENARIO", "scenario_markdown"]

#: the invented laboratory of the demo
LAB = "the gas-phase group of the (fictional) Quillmere Institute"

SAFETY_NOTE = (
    "Safety: hydrogen chloride is toxic and corrosive and carbon monoxide is toxic; heated and "
    "pressurised gas cells can fail. Filling, heating, venting and disposal follow your "
    "institution's safety rules, local codes and qualified supervision. widgetkit works on "
    "recorded data only and makes no safety judgement.")

#: the demo spectra: file name -> what the scenario says about it (all invented)
SAMPLES: dict[str, dict] = {
    "hcl_cell_296K.jdx": {
        "sample": "QM-24-017",
        "gas": "hydrogen chloride, natural isotopic abundance",
        "cell": "HC-20 heated cell, 20 cm path, CaF2 windows, at room temperature (296 K)",
        "instrument": "FTIR bench B, 0.5 cm-1 resolution, 64 scans, MCT detector",
        "y": "transmittance (fraction)",
        "format": "JCAMP-DX 4.24, compressed DIFDUP form",
        "purpose": "the fundamental band 1-0 with both chlorine isotopologues",
    },
    "hcl_cell_420K.csv": {
        "sample": "QM-24-018",
        "gas": "hydrogen chloride, natural isotopic abundance (same fill as QM-24-017)",
        "cell": "HC-20 heated cell, 20 cm path, heated to 420 K",
        "instrument": "FTIR bench B, 0.5 cm-1 resolution, 64 scans, MCT detector",
        "y": "transmittance (fraction)",
        "format": "comma-separated text with a header",
        "purpose": "the same band hotter: the rotational distribution shifts to higher J; "
                   "a rotational temperature from the line areas checks the cell heater",
    },
    "co_overview.jdx": {
        "sample": "QM-24-021",
        "gas": "carbon monoxide, natural isotopic abundance",
        "cell": "HC-20 heated cell, 20 cm path, 296 K, higher fill pressure",
        "instrument": "FTIR bench B, 1 cm-1 resolution, 256 scans, InSb detector",
        "y": "absorbance",
        "format": "JCAMP-DX 4.24, compressed DIFDUP form",
        "purpose": "an overview with the fundamental 1-0 near 2143 cm-1 and the much weaker "
                   "first overtone 2-0 near 4260 cm-1",
    },
}

SCENARIO = (
    f"The demo follows {LAB} while it commissions a new heated gas cell, HC-20, on its "
    "Fourier-transform infrared spectrometer. To check the cell, the group records the "
    "hydrogen chloride fundamental at room temperature and again with the cell heated, and "
    "takes a carbon monoxide overview that shows the fundamental and the first overtone. "
    "From these spectra it wants the band origin, rotational constants and bond length of HCl "
    "for both chlorine isotopologues, the cell temperature as the molecules see it, and the "
    "harmonic wavenumber and anharmonicity of CO. The institute, the people, the sample codes "
    "and the instrument settings are invented; the spectra were computed by widgetkit's "
    "simulator from published molecular constants with invented noise and baselines.")


def scenario_markdown() -> str:
    """The scenario as the README of the demo data folder."""
    rows = "\n".join(f"| `{name}` | {s['sample']} | {s['cell']} | {s['instrument']} | {s['y']} | "
                     f"{s['purpose']} |" for name, s in SAMPLES.items())
    return f"""# widgetkit demo data

{SCENARIO}

> {SAFETY_NOTE}

| file | sample | cell | instrument | y | what it shows |
| --- | --- | --- | --- | --- | --- |
{rows}

The files are regenerated, byte for byte, by `python -m widgetkit.demo.make_data`.
"""
