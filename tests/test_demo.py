"""The demo: shipped data, its reproducible generation, copying and the launcher."""

from __future__ import annotations

import json
import sys
import sysconfig
from pathlib import Path

import numpy as np
import pytest

import widgetkit as wk
from widgetkit import demo
from widgetkit.cli import main
from widgetkit.demo import make_data

ROOT = Path(__file__).resolve().parent.parent


def test_every_demo_spectrum_ships_small_and_reads_back():
    for name, sample in demo.SAMPLES.items():
        path = demo.data_path(name)
        assert path.stat().st_size < 300_000, name          # the size budget of the demo data
        sp = wk.read_spectrum(path)
        assert sp.y_kind == sample["y"].split()[0]
        assert "simulated" in sp.meta["title"]               # the files say they are simulated
    co = wk.read_spectrum(demo.data_path("co_overview.jdx"))
    assert co.x[0] < 2143 < co.x[-1] and co.x[0] < 4260 < co.x[-1]  # fundamental and overtone


def test_make_data_regenerates_the_shipped_files_byte_for_byte(tmp_path):
    written = make_data.write_data(tmp_path)
    assert {p.name for p in written} == set(demo.SAMPLES) | {"README.md"}
    for p in written:
        assert p.read_bytes() == demo.data_path(p.name).read_bytes(), (
            f"{p.name} differs from the shipped file: run python -m widgetkit.demo.make_data")


def test_demo_spectrum_matches_the_simulation_it_was_made_from():
    # self-consistency: the file holds the simulator's output rounded to 5 decimals
    sp = wk.read_spectrum(demo.data_path("hcl_cell_296K.jdx"))
    fresh = make_data.SPECTRA["hcl_cell_296K.jdx"][0]()
    assert np.array_equal(sp.x, np.round(fresh.x, 6))
    assert np.max(np.abs(sp.y - fresh.y)) <= 0.5e-5 + 1e-12


def test_scenario_is_invented_and_carries_the_safety_note():
    text = demo.data_path("README.md").read_text(encoding="utf-8")
    assert "fictional" in text and "invented" in text
    assert demo.SAFETY_NOTE in text
    for word in ("toxic", "corrosive", "local codes", "qualified supervision", "no safety judgement"):
        assert word in demo.SAFETY_NOTE


def test_copy_demo_copies_notebooks_and_data_then_leaves_identical_files(tmp_path):
    rep = demo.copy_demo(tmp_path / "d")
    names = set(demo.demo_sources())
    assert set(rep.copied) == names and demo.QUICK_START in names
    assert all(n.startswith("data/") or n.endswith(".ipynb") for n in names)
    assert (tmp_path / "d" / "data" / "hcl_cell_296K.jdx").read_bytes() == \
        demo.data_path("hcl_cell_296K.jdx").read_bytes()
    again = demo.copy_demo(tmp_path / "d")
    assert set(again.unchanged) == names and not again.copied


def test_an_edited_notebook_is_kept_unless_the_user_agrees(tmp_path):
    demo.copy_demo(tmp_path)
    nb = tmp_path / demo.QUICK_START
    nb.write_text('{"edited": true}', encoding="utf-8")
    asked = []
    rep = demo.copy_demo(tmp_path, ask=lambda rel: asked.append(rel) or False)
    assert rep.kept == [demo.QUICK_START] and asked == [demo.QUICK_START]
    assert nb.read_text(encoding="utf-8") == '{"edited": true}'
    rep = demo.copy_demo(tmp_path)                             # no ask: never replaced
    assert rep.kept == [demo.QUICK_START]
    rep = demo.copy_demo(tmp_path, ask=lambda rel: True)
    assert rep.replaced == [demo.QUICK_START]
    backup = tmp_path / rep.backups[demo.QUICK_START]
    assert backup.read_text(encoding="utf-8") == '{"edited": true}'   # the edit is not lost
    assert nb.read_bytes() == demo.demo_sources()[demo.QUICK_START].read_bytes()


def test_an_untouched_old_copy_is_updated_without_asking(tmp_path):
    demo.copy_demo(tmp_path)
    target = tmp_path / "data" / "README.md"
    old = b"an older shipped version\n"
    target.write_bytes(old)
    manifest = json.loads((tmp_path / demo.MANIFEST).read_text(encoding="utf-8"))
    import hashlib

    manifest["files"]["data/README.md"] = hashlib.sha256(old).hexdigest()
    (tmp_path / demo.MANIFEST).write_text(json.dumps(manifest), encoding="utf-8")
    rep = demo.copy_demo(tmp_path, ask=lambda rel: pytest.fail("must not ask"))
    assert rep.updated == ["data/README.md"]
    assert target.read_bytes() == demo.data_path("README.md").read_bytes()


def test_the_demo_folder_may_not_be_inside_the_installed_package(tmp_path):
    with pytest.raises(demo.DemoFolderError, match="installed"):
        demo.copy_demo(Path(wk.__file__).parent / "demo-copy")
    with pytest.raises(demo.DemoFolderError, match="installed"):
        demo.copy_demo(Path(sysconfig.get_paths()["purelib"]) / "widgetkit-demo")
    (tmp_path / "file").write_text("x", encoding="utf-8")
    with pytest.raises(demo.DemoFolderError, match="not a folder"):
        demo.copy_demo(tmp_path / "file")
    assert not demo.default_demo_dir().resolve().is_relative_to(Path(wk.__file__).parent.resolve())


def test_jupyter_listens_on_localhost_with_the_token_left_on(tmp_path):
    cmd = demo.jupyter_command(tmp_path, browser=False)
    assert cmd[:4] == [sys.executable, "-m", "jupyter", "lab"]
    assert "--ServerApp.ip=127.0.0.1" in cmd and "--no-browser" in cmd
    assert f"--ServerApp.root_dir={tmp_path}" in cmd
    assert not any("token" in c.lower() or "password" in c.lower() for c in cmd)
    assert cmd[-1] == "01-quick-start.ipynb"
    assert "--no-browser" not in demo.jupyter_command(tmp_path)
    assert "--allow-root" not in cmd                            # only when the user asks for it
    assert "--allow-root" in demo.jupyter_command(tmp_path, allow_root=True)


def test_run_demo_copies_then_launches_in_the_folder(tmp_path, monkeypatch):
    monkeypatch.setattr(demo.os, "geteuid", lambda: 1000)      # an ordinary user
    calls = []
    said = []
    rc = demo.run_demo(tmp_path / "d", browser=False, launcher=lambda c, cwd: calls.append((c, cwd)) or 7,
                       echo=said.append)
    assert rc == 7
    (cmd, cwd), = calls
    assert cwd == (tmp_path / "d").resolve() and (cwd / demo.QUICK_START).is_file()
    assert cmd == demo.jupyter_command(cwd, browser=False)
    assert any("127.0.0.1" in s for s in said) and demo.SAFETY_NOTE in said
    assert demo.ROOT_NOTE not in said and "--allow-root" not in cmd


def test_as_root_the_demo_passes_allow_root_and_says_so_in_one_line(tmp_path, monkeypatch):
    monkeypatch.setattr(demo.os, "geteuid", lambda: 0)         # root, as in most containers
    calls, said = [], []
    demo.run_demo(tmp_path, browser=False, launcher=lambda c, cwd: calls.append(c) or 0,
                  echo=said.append)
    (cmd,) = calls
    assert "--allow-root" in cmd
    assert "--ServerApp.ip=127.0.0.1" in cmd                   # still on the loopback address
    assert not any("token" in c.lower() or "password" in c.lower() for c in cmd)  # token kept
    root_lines = [s for s in said if "as root" in s]
    assert root_lines == [demo.ROOT_NOTE] and "\n" not in demo.ROOT_NOTE
    calls.clear()
    demo.run_demo(tmp_path, browser=False, allow_root=False,
                  launcher=lambda c, cwd: calls.append(c) or 0, echo=said.append)
    assert "--allow-root" not in calls[0]                      # the user's choice wins


def test_cli_demo_as_root_needs_no_flag(tmp_path, monkeypatch, capsys):
    monkeypatch.setattr(demo.os, "geteuid", lambda: 0)
    seen = {}
    monkeypatch.setattr(demo.subprocess, "call", lambda cmd, cwd: seen.update(cmd=cmd) or 0)
    assert main(["demo", "--dir", str(tmp_path / "w"), "--no-browser"]) == 0
    assert "--allow-root" in seen["cmd"]
    out = capsys.readouterr().out
    assert out.count("--allow-root") == 2 and demo.ROOT_NOTE in out   # the note and the command
    assert main(["demo", "--dir", str(tmp_path / "w"), "--no-browser", "--no-allow-root"]) == 0
    assert "--allow-root" not in seen["cmd"]


def test_cli_demo_runs_jupyter_through_subprocess(tmp_path, monkeypatch, capsys):
    seen = {}

    def fake_call(cmd, cwd):
        seen.update(cmd=cmd, cwd=cwd)
        return 0

    monkeypatch.setattr(demo.subprocess, "call", fake_call)
    assert main(["demo", "--dir", str(tmp_path / "w"), "--no-browser", "--port", "8899"]) == 0
    assert "--ServerApp.port=8899" in seen["cmd"] and Path(seen["cwd"]) == (tmp_path / "w").resolve()
    assert "token authentication on" in capsys.readouterr().out
    target = Path(wk.__file__).parent / "x"
    assert main(["demo", "--dir", str(target), "--no-browser"]) == 2
    assert not target.exists()


def test_the_package_ships_the_sample_notebooks_unchanged():
    shipped = sorted((Path(demo.__file__).parent / "notebooks").glob("*.ipynb"))
    checkout = sorted((ROOT / "sample_notebooks").glob("*.ipynb"))
    assert [p.name for p in shipped] == [p.name for p in checkout]
    assert demo.QUICK_START in [p.name for p in shipped]
    for a, b in zip(shipped, checkout):
        assert a.read_bytes() == b.read_bytes(), (
            f"{a.name}: run python -m widgetkit.demo.make_data --notebooks")


def test_sample_notebooks_are_committed_without_outputs():
    for nb in sorted((ROOT / "sample_notebooks").glob("*.ipynb")):
        doc = json.loads(nb.read_text(encoding="utf-8"))
        for cell in doc["cells"]:
            if cell["cell_type"] == "code":
                assert cell.get("outputs") == [] and cell.get("execution_count") is None, nb.name
        assert "widgets" not in doc.get("metadata", {}), f"{nb.name} holds widget state"


def test_sample_notebooks_are_valid_and_use_only_shipped_demo_files():
    import re

    import nbformat

    for nb_path in sorted((ROOT / "sample_notebooks").glob("*.ipynb")):
        nb = nbformat.read(nb_path, as_version=4)
        nbformat.validate(nb)
        code = "\n".join(c.source for c in nb.cells if c.cell_type == "code")
        for name in re.findall(r'DATA / "([^"]+)"', code):
            assert name in demo.SAMPLES, f"{nb_path.name} reads {name}, which the demo does not ship"
        text = "\n".join(c.source for c in nb.cells)
        assert "no safety judgement" in text, f"{nb_path.name} lacks the safety note"


@pytest.mark.slow
def test_notebook_05_shows_its_report_figures_from_files_that_exist(tmp_path):
    # run the notebook as a reader would, in a folder of its own, and follow every image link
    # of the Markdown it displays from that folder (a link resolving elsewhere is a broken image)
    import re

    import nbformat
    from nbclient import NotebookClient

    nb = nbformat.read(ROOT / "sample_notebooks" / "05-supplementary-material.ipynb", as_version=4)
    NotebookClient(nb, timeout=300, kernel_name="python3",
                   resources={"metadata": {"path": str(tmp_path)}}).execute()
    shown = [o["data"]["text/markdown"] for c in nb.cells if c.cell_type == "code"
             for o in c.get("outputs", []) if "text/markdown" in o.get("data", {})]
    links = [link for md in shown for link in re.findall(r"!\[[^\]]*\]\(([^)]+)\)", md)]
    assert len(links) >= 2                                   # the spectrum and the residuals
    for link in links:
        assert (tmp_path / link).is_file(), f"broken image link {link!r} in notebook 05"
