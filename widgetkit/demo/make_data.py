"""Regenerate the demo data, byte for byte: ``python -m widgetkit.demo.make_data [FOLDER]``.

The spectra of the demo scenario (:mod:`widgetkit.demo.scenario`) are computed
by :mod:`widgetkit.simulate` from the handbook constants
(:data:`widgetkit.simulate.HANDBOOK`) with invented instrument settings, fixed
noise seeds and invented baselines, then rounded to the digits an instrument
export would carry and written as JCAMP-DX (DIFDUP) or CSV. The default folder
is the package's own ``widgetkit/demo/data``; with ``--notebooks`` the sample
notebooks of a source checkout (``sample_notebooks/``) are also copied into
``widgetkit/demo/notebooks`` so that an installed package ships them.
"""

from __future__ import annotations

import argparse
import shutil
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np

from ..spectrum import Spectrum
from .scenario import SAMPLES, scenario_markdown

__all__ = ["SPECTRA", "make_spectrum", "write_data", "sync_notebooks", "main"]

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
    args = parser.parse_args(argv)
    for p in write_data(args.folder):
        print(f"wrote {p} ({p.stat().st_size} bytes)")
    if args.notebooks:
        for p in sync_notebooks():
            print(f"copied {p}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
