"""A damaged series or recipe file: read as strictly as a session file, refused with the file
and the field named, and ``widgetkit verify`` exits 2 with one line, never a traceback."""

import json

import pytest

import widgetkit as wk
from widgetkit.cli import main


@pytest.fixture
def series_file(serial_run, tmp_path):
    return serial_run.save(tmp_path / "s")


def _damage(path, edit):
    text = path.read_text()
    path.write_text(edit(text) if callable(edit) else edit)


def _set(field_path, value):
    def edit(text):
        doc = json.loads(text)
        node = doc
        for key in field_path[:-1]:
            node = node[key]
        node[field_path[-1]] = value
        return json.dumps(doc)
    return edit


CASES = [
    # (what was done to the file, the words the one line must hold)
    (lambda t: t.replace('"format"', '"complete":true,"format"', 1), "the key 'complete' twice"),
    (lambda t: t.replace('"cpu_seconds":', '"cpu_seconds":NaN,"x":', 1), "NaN"),
    (lambda t: t[: len(t) // 2], "invalid JSON at line"),
    (lambda t: t.replace('"spectra":[', '"deep":' + "[" * 200 + "]" * 200 + ',"spectra":[', 1),
     "nested"),
    (lambda t: t.replace('"seconds":', '"seconds":' + "9" * 300 + ',"x":', 1), "300 digits"),
    (_set(["spectra", 2, "constants"], "none"), "field spectra/2/constants"),
    (_set(["spectra", 1, "reasons"], [1, 2]), "field spectra/1/reasons"),
    (_set(["spectra", 0, "seconds"], "fast"), "field spectra/0/seconds"),
    (_set(["spectra", 3, "status"], "great"), "field spectra/3"),
    (_set(["spectra", 3, "session"], "../../etc/passwd"), "field spectra/3/session"),
    (_set(["variable"], [1, 2]), "field variable"),
    (_set(["recipe", "steps", 0, "kind"], "bake"), "field steps/0/kind"),
    (_set(["version"], 99), "upgrade widgetkit"),
]


@pytest.mark.parametrize("edit, words", CASES)
def test_verify_refuses_a_damaged_series_file_with_exit_2_and_one_line(series_file, edit, words,
                                                                       capsys):
    _damage(series_file, edit)
    assert main(["verify", str(series_file), "--workers", "1"]) == 2
    err = capsys.readouterr().err
    assert words in err and str(series_file) in err, err
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1


def test_loading_a_damaged_series_file_names_the_file_and_field(series_file):
    _damage(series_file, _set(["spectra", 2, "constants"], {"name": ["a", "b"], "value": [1.0]}))
    with pytest.raises(wk.SeriesError, match=r"s/series\.json: field spectra/2/constants: must "
                                             r"be an object of equally long columns"):
        wk.SeriesResult.load(series_file)


def test_a_recipe_file_is_read_as_strictly(recipe, tmp_path):
    path = tmp_path / "r.json"
    recipe.save(path)
    assert wk.Recipe.load(path).sha256 == recipe.sha256
    path.write_text(path.read_text().replace('"format"', '"version":1,"format"', 1))
    with pytest.raises(wk.SeriesError, match="r.json: .*the key 'version' twice"):
        wk.Recipe.load(path)
