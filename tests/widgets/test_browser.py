"""The panels in a real browser: JupyterLab on 127.0.0.1 driven by Debian's Chromium.

Opens the quick-start notebook, runs all cells, waits for the bqplot SVG, presses
"Find peaks" and "Fit lines" in the page and checks that the tables change. Also,
as a person would meet them: the baseline controls at a narrow width with the file
browser open (nothing clipped), a click on a row of the peak table selecting the
peak, the line table's headings, and the brush rectangle gone after Crop.
Screenshots go to the test's tmp_path and to test-output/ in the repository.

Needs the ``chromium`` executable on PATH (Debian: ``apt-get install chromium``)
and the Python package ``playwright`` (never ``playwright install``: the system
Chromium is used). Without Chromium the test is skipped, except in CI
(``CI=true``), where it fails.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow]

REPO = Path(__file__).resolve().parents[2]
NOTEBOOK = REPO / "sample_notebooks" / "01-quick-start.ipynb"
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage",
                 "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--no-first-run"]
HOW_TO = ("the browser test needs Chromium on PATH: on Debian/Ubuntu run "
          "'sudo apt-get install chromium' (the test never downloads a browser)")


def _chromium() -> str:
    path = shutil.which("chromium")
    if path is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("CI=true but " + HOW_TO)
        pytest.skip(HOW_TO)
    return path


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture
def lab(tmp_path):
    """A JupyterLab server on a free port, all its state in tmp_path; yields (url, workdir)."""
    work = tmp_path / "work"
    work.mkdir()
    shutil.copy(NOTEBOOK, work / NOTEBOOK.name)
    settings = tmp_path / "settings"
    note = settings / "@jupyterlab" / "apputils-extension"
    note.mkdir(parents=True)
    (note / "notification.jupyterlab-settings").write_text(
        json.dumps({"fetchNews": "false", "checkForUpdates": False}))
    env = dict(os.environ)
    for var, sub in (("JUPYTER_CONFIG_DIR", "config"), ("JUPYTER_DATA_DIR", "data"),
                     ("JUPYTER_RUNTIME_DIR", "runtime"), ("IPYTHONDIR", "ipython")):
        (tmp_path / sub).mkdir()
        env[var] = str(tmp_path / sub)
    # the kernel spec runs "python": make it this interpreter; the venv's share/jupyter
    # (lab extensions of ipywidgets and bqplot) stays on the data path through sys.prefix
    env["PATH"] = os.path.dirname(sys.executable) + os.pathsep + env.get("PATH", "")
    env["PYTHONWARNINGS"] = "ignore::DeprecationWarning"
    env.pop("JUPYTER_PATH", None)
    port = _free_port()
    cmd = [sys.executable, "-m", "jupyterlab", "--no-browser", "--ip=127.0.0.1",
           f"--port={port}", "--ServerApp.token=", "--ServerApp.password=",
           "--ServerApp.allow_root=True", f"--ServerApp.root_dir={work}",
           f"--LabApp.workspaces_dir={tmp_path / 'workspaces'}",
           f"--LabApp.user_settings_dir={settings}", "--LabApp.expose_app_in_browser=True",
           "--ServerApp.open_browser=False"]
    log = open(tmp_path / "jupyterlab.log", "w")
    proc = subprocess.Popen(cmd, env=env, stdout=log, stderr=subprocess.STDOUT, cwd=work)
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                with urllib.request.urlopen(url + "/api/status", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                log.flush()
                pytest.fail("JupyterLab did not start:\n" + (tmp_path / "jupyterlab.log")
                            .read_text()[-3000:])
            time.sleep(0.5)
        yield url, work
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=5)
        log.close()


def _shot(page, tmp_path: Path, name: str) -> Path:
    """A screenshot of the app (and of the whole page) to tmp_path and test-output/browser/."""
    out = REPO / "test-output" / "browser"
    out.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(tmp_path / f"{name}-page.png"))
    path = tmp_path / f"{name}.png"
    page.locator(".wk-app").first.screenshot(path=str(path))
    for p in (path, tmp_path / f"{name}-page.png"):
        shutil.copy(p, out / p.name)
    return path


def _rows(page, table: str) -> int:
    return page.locator(f"table.{table} tbody tr").count()


def _brush(page, start: float, end: float) -> None:
    """Drag across the visible plot from ``start`` to ``end`` (fractions of its width) in the
    "select region" mouse mode, as a person brushes a region."""
    page.locator("button:visible", has_text="select region").first.click()
    box = page.locator(".plotarea_events >> visible=true").first.bounding_box()
    y = box["y"] + box["height"] * 0.5
    page.mouse.move(box["x"] + box["width"] * start, y)
    page.mouse.down()
    page.mouse.move(box["x"] + box["width"] * (start + end) / 2, y, steps=8)
    page.mouse.move(box["x"] + box["width"] * end, y, steps=4)
    page.mouse.up()


def _peak_rows(page) -> int:
    return page.locator(".wk-peaks select option").count()


#: controls of the visible panel whose text does not fit (clipped labels) or that stick out
#: past the app's right edge (the browser's own layout decides; nothing is assumed)
_CLIPPED = """() => {
    const app = document.querySelector('.wk-app').getBoundingClientRect();
    const out = [];
    for (const el of document.querySelectorAll('.wk-app .widget-label, .wk-app button')) {
        if (!el.offsetParent) continue;
        const r = el.getBoundingClientRect();
        if (el.scrollWidth > el.clientWidth + 1 && el.classList.contains('widget-label'))
            out.push('clipped: ' + el.textContent);
        if (r.width > 0 && r.right > app.right + 1) out.push('outside: ' + el.textContent);
    }
    return out; }"""


def test_the_quick_start_notebook_runs_and_its_buttons_change_the_tables(lab, tmp_path):
    chromium = _chromium()
    try:
        from playwright import sync_api
    except ImportError:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail("CI=true but the Python package playwright is missing (pip install "
                        "-e '.[test]')")
        pytest.skip("the browser test needs the Python package playwright: pip install playwright "
                    "(no 'playwright install': the system Chromium is used)")
    url, _work = lab
    with sync_api.sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium, headless=True, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 2600})
            page.set_default_timeout(60_000)
            page.goto(f"{url}/lab/tree/{NOTEBOOK.name}")
            page.wait_for_function(
                "() => window.jupyterapp && window.jupyterapp.shell.currentWidget"
                " && window.jupyterapp.shell.currentWidget.sessionContext", timeout=60_000)
            page.evaluate("""async () => {
                const nb = window.jupyterapp.shell.currentWidget;
                await nb.context.ready;
                await nb.sessionContext.ready;
                await window.jupyterapp.commands.execute('notebook:run-all-cells');
            }""")
            page.wait_for_selector(".bqplot svg path.line", timeout=90_000)
            _shot(page, tmp_path, "1-after-run-all")

            # a small window with the file browser open beside the notebook: the ALS
            # baseline controls wrap onto another line instead of being clipped
            assert page.locator("#filebrowser:visible, .jp-FileBrowser:visible").count() > 0
            page.set_viewport_size({"width": 1000, "height": 2600})
            page.locator(".widget-dropdown", has_text="Baseline").locator("select").first \
                .select_option(label="asymmetric least squares")
            page.wait_for_selector(".wk-baseline-options .widget-hslider >> visible=true")
            page.wait_for_timeout(500)
            assert page.evaluate(_CLIPPED) == []
            labels = page.locator(".wk-baseline-options .widget-label >> visible=true").all_inner_texts()
            assert "smoothness λ" in labels and "asymmetry p" in labels
            _shot(page, tmp_path, "1b-narrow-with-file-browser")
            page.set_viewport_size({"width": 1400, "height": 2600})

            # brushing a region of the spectrum fills the crop fields (nothing is cropped yet)
            crop_from = page.locator(".widget-text:visible", has_text="from").locator("input").first
            before = crop_from.input_value()
            _brush(page, 0.3, 0.6)
            sync_api.expect(crop_from).not_to_have_value(before, timeout=20_000)
            sync_api.expect(page.locator(".wk-status-line:visible").first).to_contain_text(
                "press Crop", timeout=20_000)

            page.locator(".widget-tab .lm-TabBar-tab", has_text="Peaks").first.click()
            empty = page.locator(".wk-peaks-empty").first
            empty.wait_for(state="visible")
            assert "no peaks yet" in empty.inner_text()
            min_snr = page.locator(".widget-inline-hbox", has_text="min SNR").locator("input").first
            min_snr.fill("10")
            min_snr.press("Enter")
            page.locator("button.wk-find-peaks").first.click()
            page.wait_for_function(
                "() => document.querySelectorAll('.wk-peaks select option').length > 3")
            assert page.locator(".wk-peaks-empty").count() == 0
            n_found = _peak_rows(page)

            # click on the plot (in the gap at the band origin): a peak is added at the
            # nearest maximum and selected; "Remove selected" takes it away again
            page.locator("button:visible", has_text="add / select").first.click()
            area = page.locator(".plotarea_events >> visible=true").first
            box = area.bounding_box()
            area.click(position={"x": box["width"] * 0.56, "y": box["height"] * 0.8})
            page.wait_for_function(
                f"() => document.querySelectorAll('.wk-peaks select option').length > {n_found}")
            sync_api.expect(page.locator(".wk-peaks select option:checked")).to_contain_text(
                "manual", timeout=20_000)
            page.locator("button:visible", has_text="Remove selected").first.click()
            page.wait_for_function(
                f"() => document.querySelectorAll('.wk-peaks select option').length == {n_found}")
            assert "manual" not in " ".join(page.locator(".wk-peaks select option").all_inner_texts())
            # click a marker: its row is selected
            page.locator("path.dot >> visible=true").nth(1).click()
            page.wait_for_function(
                "() => document.querySelector('.wk-peaks select option:checked') !== null")
            # click a row of the table: that peak is selected (its id in the selection line)
            row = page.locator(".wk-peaks select option").nth(4)
            pid = row.inner_text().split()[0]
            row.click()
            sync_api.expect(page.locator(".widget-html:visible", has_text="peak ").filter(
                has_text=f"peak {pid} at").first).to_be_visible(timeout=20_000)
            n_peaks = _peak_rows(page)
            page.wait_for_timeout(500)
            _shot(page, tmp_path, "2-peaks-found")

            page.locator(".widget-tab .lm-TabBar-tab", has_text="Lines").first.click()
            lines_table = page.locator("table.wk-lines").first
            lines_table.wait_for(state="visible")
            assert "no lines yet" in lines_table.inner_text()
            page.locator("button.wk-fit-lines").first.click()
            page.wait_for_function(
                "() => { const t = document.querySelector('table.wk-lines');"
                " return t && !t.innerText.includes('no lines yet'); }", timeout=90_000)
            text = lines_table.inner_text()
            assert "no lines yet" not in text
            assert _rows(page, "wk-lines") == n_peaks  # one fitted line per peak
            assert re.search(r"\d\.\d+\(\d+\)", text)  # values with uncertainties
            heads = lines_table.locator("th").all_inner_texts()
            assert "Gaussian σ / cm⁻¹" in heads and "Lorentzian γ (HWHM) / cm⁻¹" in heads
            assert "lmfit" not in page.locator(".wk-fit-summary").first.inner_text()
            page.wait_for_timeout(500)
            shot = _shot(page, tmp_path, "3-lines-fitted")
            assert shot.stat().st_size > 10_000

            page.locator(".widget-tab .lm-TabBar-tab", has_text="Levels").first.click()
            constants = page.locator("table.wk-constants").first
            constants.wait_for(state="visible")
            assert "no constants yet" in constants.inner_text()
            page.locator("button.wk-assign").first.click()
            page.wait_for_function(
                "() => { const t = document.querySelector('table.wk-constants');"
                " return t && t.innerText.includes('band_origin'); }", timeout=60_000)
            assert "R(0)" in page.locator("table.wk-assignments").first.inner_text()
            page.wait_for_timeout(500)
            _shot(page, tmp_path, "4-band-assigned")

            page.locator(".widget-tab .lm-TabBar-tab", has_text="Record").first.click()
            history = page.locator("table.wk-history").first
            history.wait_for(state="visible")
            for kind in ("find_peaks", "add_peak", "remove_peak", "fit_lines", "assign_band"):
                assert kind in history.inner_text()
            assert "crop" not in history.inner_text().split("find_peaks")[-1]  # brushing only
            # step back: the record shows the earlier state (read-only) until Latest
            page.locator("button:visible", has_text="Back").first.click()
            sync_api.expect(page.locator(".wk-status:visible", has_text="showing").first
                            ).to_be_visible(timeout=20_000)
            _shot(page, tmp_path, "5-record")
            page.locator("button:visible", has_text="Latest").first.click()

            # crop a brushed region: the brush rectangle goes with the old range
            page.locator(".widget-tab .lm-TabBar-tab", has_text="Spectrum").first.click()
            _brush(page, 0.35, 0.65)
            brush = page.locator(".wk-app .selection >> visible=true")
            sync_api.expect(brush).to_have_count(1, timeout=20_000)
            page.locator("button:visible", has_text="Crop").first.click()
            sync_api.expect(page.locator(".wk-status-line:visible").first).to_contain_text(
                "cropped to", timeout=20_000)
            sync_api.expect(brush).to_have_count(0, timeout=20_000)
            _shot(page, tmp_path, "6-cropped")
        finally:
            browser.close()
