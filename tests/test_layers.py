"""The layering rule (DEVELOPERS.md, Layers): nothing below the faces imports the widget libraries."""

import subprocess
import sys

BELOW_THE_FACES = [
    "widgetkit", "widgetkit.spectrum", "widgetkit.errors", "widgetkit.units", "widgetkit.io",
    "widgetkit.processing", "widgetkit.lines", "widgetkit.levels", "widgetkit.oscillator",
    "widgetkit.simulate", "widgetkit.bandmodel", "widgetkit.session", "widgetkit.cli",
    "widgetkit.formatting", "widgetkit.fitmarks",
    "widgetkit.report",
]


def _loaded(imports: str, packages: tuple[str, ...]) -> list[str]:
    """The modules of ``packages`` loaded after running ``imports`` in a fresh interpreter."""
    code = (imports + "\nimport sys\n"
            f"print(','.join(sorted(m for m in sys.modules if m.split('.')[0] in {packages!r})))\n")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return [m for m in out.stdout.strip().split(",") if m]


def test_importing_every_layer_below_the_widgets_leaves_ipywidgets_and_bqplot_unloaded():
    imports = (
        "import importlib\n"
        f"for m in {BELOW_THE_FACES!r}: importlib.import_module(m)\n"
        "import widgetkit as wk\n"
        "wk.lines, wk.levels, wk.oscillator, wk.simulate, wk.Session, wk.Diatomic\n"
    )
    assert _loaded(imports, ("ipywidgets", "bqplot")) == []


def test_the_widget_layer_does_load_ipywidgets_when_imported():
    # the counter-check: the probe above can see ipywidgets when it is imported
    assert "ipywidgets" in _loaded("import widgetkit.widgets", ("ipywidgets",))


def test_the_series_face_loads_neither_widgets_nor_dask_until_a_cluster_is_used():
    imports = "import widgetkit as wk, widgetkit.series\nwk.run_series, wk.Recipe, wk.SeriesResult\n"
    assert _loaded(imports, ("ipywidgets", "bqplot", "dask", "distributed")) == []
