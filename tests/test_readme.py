"""The README's code runs as written: its python blocks are executed here, in order, in one
namespace, in an empty folder (so they cannot lean on files of the checkout), and the shell
commands it gives are targets of the Makefile or sub-commands of the ``widgetkit`` command."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from widgetkit.cli import build_parser

ROOT = Path(__file__).resolve().parent.parent
README = ROOT / "README.md"


def _blocks(language: str) -> list[str]:
    text = README.read_text(encoding="utf-8")
    return re.findall(rf"^```{language}\n(.*?)^```", text, flags=re.M | re.S)


def test_the_readme_has_a_headless_block_that_checks_its_verification():
    blocks = _blocks("python")
    assert len(blocks) >= 2                      # headless use, then the widgets on it
    headless = blocks[0]
    assert "wk.demo.data_path(" in headless      # shipped data, no file the reader lacks
    assert "to_absorbance()" in headless         # the demo file holds transmittance
    assert re.search(r"^assert \w+\.ok", headless, flags=re.M)  # a failed verify is loud


def test_the_readme_python_blocks_run_verbatim(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    namespace: dict = {"__name__": "__readme__"}
    for i, code in enumerate(_blocks("python")):
        try:
            exec(compile(code, f"README.md python block {i + 1}", "exec"), namespace)
        except Exception as exc:  # name the block that broke
            pytest.fail(f"README.md python block {i + 1} raised {type(exc).__name__}: {exc}")
    out = capsys.readouterr().out
    assert "band_origin" in out and "verified" in out
    assert (tmp_path / "hcl_band.session.json").is_file()


def test_the_readme_shell_commands_exist():
    makefile = (ROOT / "Makefile").read_text(encoding="utf-8")
    targets = set(re.findall(r"^([a-z][\w-]*):", makefile, flags=re.M))
    commands = set(build_parser()._subparsers._group_actions[0].choices)
    text = README.read_text(encoding="utf-8")
    for block in _blocks("bash"):
        for line in block.splitlines():
            words = line.split("#")[0].split()
            if words[:1] == ["make"]:
                assert words[1] in targets, line
    for cmd in re.findall(r"`widgetkit (\w+)", text):
        assert cmd in commands, cmd
    assert {"demo", "test"} <= targets
