"""The processing package's public face and its place in the layering."""

from __future__ import annotations

import subprocess
import sys

import widgetkit.processing as processing


def test_every_public_name_of_processing_exists():
    missing = [name for name in processing.__all__ if not hasattr(processing, name)]
    assert missing == []


def test_importing_processing_leaves_the_widget_libraries_unloaded():
    code = (
        "import sys, widgetkit.processing; "
        "print(sorted(m for m in ('ipywidgets', 'bqplot', 'widgetkit.session') "
        "if m in sys.modules))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    # layering rule (DEVELOPERS.md): computation imports neither faces nor the session
    assert out.stdout.strip() == "[]"
