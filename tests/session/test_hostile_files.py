"""Damaged and hostile session files: Session.load raises only SessionFormatError (naming the
step and field where there is one), or the file opens and verify reports the difference;
``widgetkit verify`` exits 2 for unreadable files, never with a traceback. The band is
simulated (demo data, self-consistency only)."""

import json
import re
import subprocess
import sys

import numpy as np
import pytest
from _mutations import json_paths
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import widgetkit as wk
from widgetkit.cli import main


@pytest.fixture(scope="module")
def full(tmp_path_factory):
    """load, crop, baseline, peaks, line fit, assignment, a lock and a note."""
    hcl = wk.Diatomic("H", "Cl")
    sp = wk.simulate.rovibrational(hcl, wk.simulate.HANDBOOK["1H-35Cl"], x_range=(2650, 3100),
                                   step=0.05, seed=5, noise=0.001, resolution=0.3,
                                   temperature=296.0)
    s = wk.Session(sp)
    s.crop(2700, 3050)                      # 1
    s.subtract_baseline("poly", degree=1)   # 2
    s.find_peaks(min_snr=10)                # 3
    s.fit_lines(shape="gaussian")           # 4
    s.assign_band(hcl, temperature=296.0)   # 5
    a = s.assignments
    r1 = int(a.loc[(a["label"] == "R(1)") & (a["isotopologue"] == "1H-35Cl"), "line_id"].iloc[0])
    s.set_assignment(r1, label="R(1)", isotopologue="1H-35Cl")  # 6
    s.note("a referee's copy")              # 7
    path = tmp_path_factory.mktemp("full") / "full.json"
    s.save(path)
    return path.read_text()


def _step(doc, kind):
    return next(s for s in doc["steps"] if s["kind"] == kind)


def _edit(fn):
    def apply(text):
        doc = json.loads(text)
        fn(doc)
        return json.dumps(doc)
    return apply


FORMAT = [  # (name, change of the file's text, words the SessionFormatError must hold)
    ("crop without lo", _edit(lambda d: _step(d, "crop")["params"].pop("lo")),
     "step 1 (crop), field params.lo: is required"),
    ("note without text", _edit(lambda d: _step(d, "note")["params"].pop("text")),
     "step 7 (note), field params.text: is required"),
    ("an unknown option", _edit(lambda d: _step(d, "find_peaks")["params"].update(bogus=1)),
     "step 3 (find_peaks), field params.bogus: is not a parameter"),
    ("a string for a number", _edit(lambda d: _step(d, "find_peaks")["params"].update(
        min_snr="ten")), "field params.min_snr: must be a number, got 'ten'"),
    ("a 5,000-digit integer", lambda t: t.replace('"min_snr":10.0', '"min_snr":' + "9" * 5000),
     "field steps/3/params/min_snr: holds an integer of 5,000 digits"),
    ("nesting 100,000 deep", lambda t: t.replace('"meta":{', '"meta":{"deep":' + "[" * 100_000
                                                 + "]" * 100_000 + ","), "levels deep (at most 64)"),
    ("a duplicated key", lambda t: t.replace('"lo":2700.0', '"lo":2700.0,"lo":2600.0'),
     "field steps/1/params/lo: holds the key 'lo' twice"),
    ("NaN in a result", lambda t: t.replace('"chisqr":', '"chisqr":NaN,"x":', 1),
     "holds NaN, which is not JSON"),
    ("a negative minimum abundance", _edit(lambda d: _step(d, "assign_band")["params"][
        "molecule"].update(min_abundance=-0.5)),
     "step 5 (assign_band), field params.molecule.min_abundance: must be a number of at least 0"),
    ("an expression that overflows", _edit(lambda d: _step(d, "fit_lines")["params"].update(
        constraints={"l3_area": "9**9**9"})), "step 4 (fit_lines), field params.constraints.l3_area"),
    ("a division by zero", _edit(lambda d: _step(d, "fit_lines")["params"].update(
        constraints={"l3_area": "l4_area/0"})), "divides by zero"),
    ("a 200,000-term sum", _edit(lambda d: _step(d, "fit_lines")["params"].update(
        constraints={"l3_area": "+".join(["l4_area"] * 200_000)})), "field params.constraints"),
    ("confidence intervals on 36 parameters", _edit(lambda d: _step(d, "fit_lines")[
        "params"].update(conf_interval=[f"l{i}_area" for i in range(36)])),
     "field params.conf_interval: must name at most 8 items, got 36"),
    ("steps not a list", _edit(lambda d: d.update(steps={"0": 1})), "field steps: must be array"),
    ("an unknown step kind", _edit(lambda d: d["steps"][7].update(kind="erase_disk")),
     "field steps/7/kind: unknown step kind 'erase_disk'"),
    ("a second load step", _edit(lambda d: d["steps"].insert(2, d["steps"][0])),
     "field steps/2/kind: only step 0 may be 'load'"),
    ("no load step first", _edit(lambda d: d["steps"].pop(0)), "the first step must be 'load'"),
    ("params not an object", _edit(lambda d: d["steps"][1].update(params=[1, 2])),
     "field steps/1/params: must be object"),
    ("a shape that does not fit the data", _edit(lambda d: d["sources"][0]["data"]["x"].update(
        shape=[5])), "needs 40"),
    ("a shape of a billion points", _edit(lambda d: d["sources"][0]["data"]["x"].update(
        shape=[10**10])), "field sources/0/data"),
    ("data that is not base64", _edit(lambda d: d["sources"][0]["data"]["y"].update(
        data="!!!!" * 10)), "base64 data is corrupt"),
    ("no source", _edit(lambda d: d.update(sources=[])), "field sources"),
    ("a newer version", _edit(lambda d: d.update(version=2)), "version 2"),
    ("half a file", lambda t: t[: len(t) // 2], "invalid JSON"),
    ("an empty file", lambda t: "", "invalid JSON"),
    ("not text", lambda t: "\x00\x81\xfe", "invalid JSON"),
    ("a list at the top", lambda t: "[1, 2]", "not a widgetkit session file"),
]

VERIFY = [  # (name, change, words one of verify's mismatches must hold)
    ("a changed sample value", _edit(lambda d: d["sources"][0]["data"]["y"].update(
        data=d["sources"][0]["data"]["x"]["data"])), "source src1 field data.y"),
    ("a changed summary", _edit(lambda d: _step(d, "crop").update(summary="cropped to 0–1 cm-1")),
     "step 1 (crop) summary"),
    ("a damaged fit record", _edit(lambda d: _step(d, "fit_lines")["result"].update(record=5)),
     "step 4 (fit_lines)"),
    ("a column taken from the lines", _edit(lambda d: _step(d, "fit_lines")["result"][
        "lines"].pop("position")), "step 4 (fit_lines)"),
    ("changed peak ids", _edit(lambda d: _step(d, "find_peaks")["result"]["peaks"][
        "peak_id"].reverse()), "step 3 (find_peaks)"),
    ("a record naming foreign code", _edit(lambda d: _step(d, "assign_band")["result"][
        "record"].update(type="os:system")), "step 5 (assign_band)"),
    ("a changed constant", _edit(lambda d: _step(d, "assign_band")["result"]["constants"][
        "value"].__setitem__(0, 1.0)), "step 5 (assign_band) result.constants.value[0]"),
    ("a changed parameter", _edit(lambda d: _step(d, "crop")["params"].update(hi=3000.0)),
     "step 1 (crop) result.x_max"),
]


@pytest.mark.parametrize("name, change, words", FORMAT, ids=[c[0] for c in FORMAT])
def test_a_malformed_file_is_a_session_format_error_naming_where(full, tmp_path, name, change,
                                                                   words):
    path = tmp_path / "hostile.json"
    path.write_bytes(change(full).encode("utf-8", "surrogatepass"))
    with pytest.raises(wk.SessionFormatError) as info:
        wk.Session.load(path)
    message = str(info.value)
    assert words in message, message
    assert len(message) < 600  # never a dump of the file
    assert main(["verify", str(path)]) == 2


@pytest.mark.parametrize("name, change, words", VERIFY, ids=[c[0] for c in VERIFY])
def test_a_tampered_file_opens_and_verify_names_the_difference(full, tmp_path, name, change,
                                                                words):
    path = tmp_path / "tampered.json"
    path.write_text(change(full))
    report = wk.Session.load(path).verify()
    assert not report.ok
    assert any(words in m for m in report.mismatches), report.mismatches
    assert main(["verify", str(path)]) == 1


def test_the_untouched_file_verifies(full, tmp_path):
    path = tmp_path / "good.json"
    path.write_text(full)
    assert wk.Session.load(path).verify().ok


def test_the_command_line_never_shows_a_traceback(full, tmp_path):
    for i, (_, change, _) in enumerate(FORMAT[:8]):
        path = tmp_path / f"h{i}.json"
        path.write_text(change(full))
        run = subprocess.run([sys.executable, "-m", "widgetkit.cli", "verify", str(path)],
                             capture_output=True, text=True, timeout=120)
        assert run.returncode == 2, run.stderr
        assert "Traceback" not in run.stderr and run.stderr.count("\n") == 1, run.stderr


# ------------------------------------------------------------------ property-based
@pytest.fixture(scope="module")
def small(tmp_path_factory):
    """A quick session (no fit) for many mutations: every step kind but the fit ones."""
    rng = np.random.default_rng(1)
    x = np.linspace(1000.0, 1200.0, 801)
    y = sum(a * np.exp(-0.5 * ((x - c) / 1.2) ** 2) for c, a in ((1050, 1.0), (1120, 0.6)))
    s = wk.Session(wk.Spectrum(x, y + rng.normal(0, 0.002, x.size)))  # invented data
    s.crop(1010, 1190)
    s.subtract_baseline("als", lam=1e5, p=0.01)
    s.find_peaks(min_snr=8)
    s.add_peak(1100.0, snap=False)
    s.remove_peak(1)
    s.note("small")
    return s.to_document()


JSON_VALUES = st.recursive(
    st.none() | st.booleans() | st.integers(-2**70, 2**70) | st.floats(allow_nan=False)
    | st.text(max_size=12),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(st.text(max_size=5), inner,
                                                                max_size=3),
    max_leaves=6)


_QUIET = [HealthCheck.too_slow, HealthCheck.function_scoped_fixture]


@settings(max_examples=150, deadline=None, derandomize=True, suppress_health_check=_QUIET)
@given(data=st.data())
def test_any_single_change_is_refused_cleanly_or_opens_and_verifies_without_raising(
        small, tmp_path_factory, data):
    _mutated_file_behaves(small, tmp_path_factory, data)


@pytest.mark.slow
@settings(max_examples=1000, deadline=None, suppress_health_check=_QUIET)
@given(data=st.data())
def test_many_random_single_changes_behave(small, tmp_path_factory, data):
    _mutated_file_behaves(small, tmp_path_factory, data)


def _mutated_file_behaves(small, tmp_path_factory, data):
    paths = [p for p in json_paths(small) if p]
    path = data.draw(st.sampled_from(paths))
    doc = json.loads(json.dumps(small))
    target = doc
    for key in path[:-1]:
        target = target[key]
    action = data.draw(st.sampled_from(["replace", "delete", "add"]))
    if action == "delete" and isinstance(target, dict):
        del target[path[-1]]
    elif action == "add" and isinstance(target, dict):
        target[data.draw(st.text(max_size=6))] = data.draw(JSON_VALUES)
    else:
        target[path[-1]] = data.draw(JSON_VALUES)
    file = tmp_path_factory.mktemp("prop") / "s.json"
    file.write_text(json.dumps(doc))
    try:
        s = wk.Session.load(file)
    except wk.SessionFormatError as exc:
        assert len(str(exc)) < 800 and not re.search(r"[A-Za-z0-9+/]{200}", str(exc))
        return
    report = s.verify()  # never raises; a change is either harmless or reported
    assert isinstance(report.ok, bool)
