"""The layering rule (DEVELOPERS.md, Layers): nothing below the faces imports the widget libraries."""

import subprocess
import sys

BELOW_THE_FACES = [
    "widgetkit", "widgetkit.spectrum", "widgetkit.errors", "widgetkit.units", "widgetkit.io",
    "widgetkit.processing", "widgetkit.lines", "widgetkit.levels", "widgetkit.oscillator",
    "widgetkit.simulate", "widgetkit.bandmodel", "widgetkit.session", "widgetkit.cli",
    "widgetkit.formatting",
    "widgetkit.report",
]


def test_importing_every_layer_below_the_widgets_leaves_ipywidgets_and_bqplot_unloaded():
    code = (
        "import importlib, sys\n"
        f"for m in {BELOW_THE_FACES!r}: importlib.import_module(m)\n"
        "import widgetkit as wk\n"
        "wk.lines, wk.levels, wk.oscillator, wk.simulate, wk.Session, wk.Diatomic\n"
        "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('ipywidgets', 'bqplot'))\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_the_widget_layer_does_load_ipywidgets_when_imported():
    # the counter-check: the probe above can see ipywidgets when it is imported
    code = "import sys, widgetkit.widgets; print('ipywidgets' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "True"


def test_the_series_face_loads_neither_widgets_nor_dask_until_a_cluster_is_used():
    code = (
        "import sys, widgetkit as wk\n"
        "wk.run_series, wk.Recipe, wk.SeriesResult\n"
        "import widgetkit.series\n"
        "bad = sorted(m for m in sys.modules\n"
        "             if m.split('.')[0] in ('ipywidgets', 'bqplot', 'dask', 'distributed'))\n"
        "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
