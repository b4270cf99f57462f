"""Regenerate the demo data, byte for byte: ``python -m widgetkit.demo.make_data [FOLDER]``.

The spectra of the demo scenario (:mod:`widgetkit.demo.scenario`) are computed
by :mod:`widgetkit.simulate` from the handbook constants
(:data:`widgetkit.simulate.HANDBOOK`) with invented instrument settings, fixed
noise seeds and invented baselines, then rounded to the digits an instrument
export would carry and written as JCAMP-DX (DIFDUP) or CSV. The default folder
is the package's own ``widgetkit/demo/data``; with ``--notebooks`` the sample
notebooks of a source checkout (``sample_notebooks/``) are also copied into
``widgetkit/demo/notebooks`` so that an installed package ships them.

The heating-ramp series (13 spectra, :func:`write_series`) is not shipped, to
keep the package small: the series notebook writes it where it runs
(``--series DIR`` writes it from the command line).
"""

from __future__ import annotations

import argparse
import shutil
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np

from .._files import atomic_write
from ..spectrum import Spectrum
from .scenario import SAMPLES, scenario_markdown

__all__ = ["SPECTRA", "make_spectrum", "write_data", "sync_notebooks", "main", "write_series",
           "write_labelled_jcamp", "ramp_gas_temperature", "RAMP_SET_POINTS"]

_ORIGIN = "Quillmere Institute gas-phase group (fictional); simulated by widgetkit"
_OWNER = "widgetkit demo data (invented scenario), free to use"


def _hcl(temperature: float, seed: int, title: str) -> Spectrum:
    from .. import simulate
    from ..levels import Diatomic

    return simulate.rovibrational(
        Diatomic("H", "Cl"), simulate.HANDBOOK["1H-35Cl"], x_range=(2550.0, 3200.0), step=0.1,
        resolution=0.5, temperature=temperature, strength=0.9, lorentz_hwhm=0.15, noise=0.002,
        seed=seed, baseline=(0.04, 0.015, 0.006), y_kind="transmittance", title=title)


def _co() -> Spectrum:
    from .. import simulate
    from ..levels import Diatomic

    return simulate.vibrational(
        Diatomic("C", "O"), simulate.HANDBOOK["12C-16O"], bands=((1, 0), (2, 0)),
        x_range=(1950.0, 4400.0), step=0.25, resolution=1.0, temperature=296.0, strength=1.5,
        noise=0.0001, seed=21, baseline=(0.02, 0.01), y_kind="absorbance",
        title="QM-24-021 carbon monoxide overview, HC-20 cell, 296 K (simulated)")


#: file name -> (function making the spectrum, decimals of y kept in the file)
SPECTRA: dict[str, tuple[Callable[[], Spectrum], int]] = {
    "hcl_cell_296K.jdx": (lambda: _hcl(296.0, 17, "QM-24-017 hydrogen chloride, HC-20 cell, "
                                       "296 K (simulated)"), 5),
    "hcl_cell_420K.csv": (lambda: _hcl(420.0, 18, "QM-24-018 hydrogen chloride, HC-20 cell "
                                       "heated, 420 K (simulated)"), 5),
    "co_overview.jdx": (_co, 6),
}


# ---------------------------------------------------------------------- the heating ramp
#: set points of the HC-20 heating ramp (K); the thirteenth file was recorded during a refill
RAMP_SET_POINTS = tuple(300.0 + 20.0 * k for k in range(12))
#: invented: the gas runs cooler than the heater's set point by this fraction of the excess
#: over the room (the cell windows are not heated)
RAMP_LAG = 0.045
RAMP_ROOM = 296.0


def ramp_gas_temperature(set_point: float) -> float:
    """The gas temperature the demo simulates for a set point (K): set − 4.5 % of (set − 296 K)."""
    return set_point - RAMP_LAG * (set_point - RAMP_ROOM)


def _ramp_spectrum(k: int, set_point: float, *, strength: float = 0.9) -> Spectrum:
    from .. import simulate
    from ..levels import Diatomic

    gas = ramp_gas_temperature(set_point)
    return simulate.rovibrational(
        Diatomic("H", "Cl"), simulate.HANDBOOK["1H-35Cl"], x_range=(2550.0, 3200.0), step=0.1,
        resolution=0.5, temperature=gas, strength=strength, lorentz_hwhm=0.15, noise=0.002,
        seed=3000 + k, baseline=(0.04, 0.015 + 0.002 * k, 0.006), y_kind="transmittance",
        title=f"QM-24-{30 + k:03d} hydrogen chloride, HC-20 ramp, set point {set_point:.0f} K "
              "(simulated)")


def write_labelled_jcamp(spectrum: Spectrum, path: str | Path, labels: dict[str, str]) -> Path:
    """Write ``spectrum`` as JCAMP-DX (DIFDUP, y rounded to 5 decimals as the instrument
    export would) with extra labelled data records (``{"$SET TEMPERATURE": "340 K"}`` becomes
    ``##$SET TEMPERATURE=340 K``, a user-defined label of JCAMP-DX 4.24) after ``##OWNER=``."""
    from ..io import write_jcamp

    sp = spectrum.replace(x=np.round(spectrum.x, 6), y=np.round(spectrum.y, 5))
    path = Path(path)
    write_jcamp(sp, path, form="DIFDUP", origin=_ORIGIN, owner=_OWNER)
    lines = path.read_text(encoding="ascii").split("\n")
    at = next(i for i, line in enumerate(lines) if line.startswith("##OWNER=")) + 1
    lines[at:at] = [f"##{k}={v}" for k, v in labels.items()]
    atomic_write(path, "\n".join(lines).encode("ascii"), what="write the demo data")
    return path


def write_series(folder: str | Path) -> list[Path]:
    """Write the demo heating ramp to ``folder`` (created): 12 spectra of HCl in the HC-20
    cell at set points 300–520 K (``hc20_ramp_01_300K.jdx`` ...) and a thirteenth recorded
    at 520 K while the cell was being refilled (almost no gas). Each file carries
    ``##$SET TEMPERATURE=`` (the heater's set point) and ``##$SAMPLE=``. The gas temperature
    simulated is :func:`ramp_gas_temperature` of the set point. Deterministic (fixed seeds)."""
    out = Path(folder)
    out.mkdir(parents=True, exist_ok=True)
    written = []
    for k, T in enumerate(RAMP_SET_POINTS):
        sp = _ramp_spectrum(k, T)
        written.append(write_labelled_jcamp(
            sp, out / f"hc20_ramp_{k + 1:02d}_{T:.0f}K.jdx",
            {"$SET TEMPERATURE": f"{T:.0f} K", "$SAMPLE": f"QM-24-{30 + k:03d}"}))
    refill = _ramp_spectrum(12, RAMP_SET_POINTS[-1], strength=0.004)
    written.append(write_labelled_jcamp(
        refill, out / "hc20_ramp_13_refill.jdx",
        {"$SET TEMPERATURE": f"{RAMP_SET_POINTS[-1]:.0f} K", "$SAMPLE": "QM-24-042 (refill)"}))
    return written


def make_spectrum(name: str) -> Spectrum:
    """The demo spectrum ``name`` (a key of :data:`SPECTRA`) as it is written to its file:
    x rounded to 6 decimals, y to the file's decimals."""
    make, decimals = SPECTRA[name]
    sp = make()
    return sp.replace(x=np.round(sp.x, 6), y=np.round(sp.y, decimals))


def write_data(folder: str | Path | None = None) -> list[Path]:
    """Write every demo spectrum and the data README to ``folder`` (default: the package's
    ``data`` folder); returns the paths written."""
    from ..io import write_csv, write_jcamp

    out = Path(folder) if folder is not None else Path(__file__).with_name("data")
    out.mkdir(parents=True, exist_ok=True)
    written = []
    for name in SPECTRA:
        sp = make_spectrum(name)
        path = out / name
        if name.endswith(".jdx"):
            write_jcamp(sp, path, form="DIFDUP", origin=_ORIGIN, owner=_OWNER)
        else:
            write_csv(sp, path)
        written.append(path)
    readme = out / "README.md"
    readme.write_text(scenario_markdown(), encoding="utf-8")
    written.append(readme)
    assert set(SAMPLES) == set(SPECTRA)  # the scenario describes every file
    return written


def sync_notebooks(checkout: str | Path | None = None) -> list[Path]:
    """Copy ``sample_notebooks/*.ipynb`` of a source checkout into ``widgetkit/demo/notebooks``."""
    pkg = Path(__file__).parent
    root = Path(checkout) if checkout is not None else pkg.parent.parent
    src = root / "sample_notebooks"
    if not src.is_dir():
        raise FileNotFoundError(f"no sample_notebooks folder in {root}; run this from a source "
                                "checkout of widgetkit")
    dest = pkg / "notebooks"
    dest.mkdir(exist_ok=True)
    out = []
    for nb in sorted(src.glob("*.ipynb")):
        shutil.copyfile(nb, dest / nb.name)
        out.append(dest / nb.name)
    return out


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m widgetkit.demo.make_data",
                                     description="Regenerate the widgetkit demo data.")
    parser.add_argument("folder", nargs="?", help="where to write (default: the package data folder)")
    parser.add_argument("--notebooks", action="store_true",
                        help="also copy sample_notebooks/*.ipynb into the package")
    parser.add_argument("--series", metavar="DIR",
                        help="also write the heating-ramp series (13 spectra) to DIR")
    args = parser.parse_args(argv)
    for p in write_data(args.folder):
        print(f"wrote {p} ({p.stat().st_size} bytes)")
    if args.series:
        for p in write_series(args.series):
            print(f"wrote {p} ({p.stat().st_size} bytes)")
    if args.notebooks:
        for p in sync_notebooks():
            print(f"copied {p}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
