"""Fixtures of the series tests (the simulated series is described in :mod:`.simulated`)."""

import pytest

import widgetkit as wk

from .simulated import work_out, write_series


@pytest.fixture(scope="session")
def series_dir(tmp_path_factory):
    folder = tmp_path_factory.mktemp("series") / "cell"
    write_series(folder)
    return folder


@pytest.fixture(scope="session")
def reference(series_dir):
    return work_out(sorted(series_dir.iterdir())[0])


@pytest.fixture(scope="session")
def recipe(reference):
    return reference.recipe()


@pytest.fixture(scope="session")
def serial_run(recipe, series_dir, tmp_path_factory):
    out = tmp_path_factory.mktemp("serial")
    return wk.run_series(recipe, series_dir, variable="set temperature", workers=1,
                         progress=False, out=out)
