"""Checks every reader must pass, run over every sample file and every writer's output."""

from __future__ import annotations

import hashlib
import json
from pathlib import Path

import numpy as np
import pytest

import widgetkit as wk
from widgetkit.io import read_spectrum, write_csv, write_jcamp

DATA = Path(__file__).parent.parent / "data" / "io"
OPTIONS = {"lr15_whitespace_columns.txt": {"y_kind": "absorbance"}}
SAMPLES = sorted(p.name for p in DATA.iterdir() if p.name.startswith("lr"))


def _written(tmp_path) -> list[Path]:
    x = np.linspace(1000.0, 1200.0, 41)
    s = wk.Spectrum(x, 0.1 + 0.5 * np.exp(-((x - 1100.0) / 9.0) ** 2), y_kind="absorbance",
                    meta={"title": "LR conformance demo"})
    return [write_csv(s, tmp_path / "w.csv"), write_jcamp(s, tmp_path / "w.jdx"),
            write_jcamp(s, tmp_path / "a.jdx", form="AFFN"),
            write_jcamp(s, tmp_path / "p.jdx", form="XYPOINTS")]


def check_reader_contract(path, options) -> None:
    s = read_spectrum(path, **options)
    x, y = s.x, s.y
    assert x.dtype == np.float64 and y.dtype == np.float64
    assert not x.flags.writeable and not y.flags.writeable
    assert np.all(np.diff(x) > 0) and np.all(np.isfinite(x)) and np.all(np.isfinite(y))
    assert s.y_kind in ("absorbance", "transmittance", "intensity")
    data = Path(path).read_bytes()
    assert s.source == {"path": str(Path(path).resolve()), "format": s.source["format"],
                        "sha256": hashlib.sha256(data).hexdigest(), "size": len(data)}
    assert s.source["format"] in ("text", "jcamp-dx")
    assert json.loads(json.dumps(s.meta)) == s.meta  # plain JSON
    assert isinstance(s.meta["title"], str) and s.meta["x_unit"] in ("cm-1", "nm", "um", "THz")
    again = read_spectrum(path, **s.meta["read_options"])
    assert again == s and again.meta == s.meta  # the recorded options reproduce the read


@pytest.mark.parametrize("name", SAMPLES)
def test_every_sample_file_meets_the_reader_contract(name):
    check_reader_contract(DATA / name, OPTIONS.get(name, {}))


def test_every_writer_output_meets_the_reader_contract(tmp_path):
    for path in _written(tmp_path):
        check_reader_contract(path, {})
