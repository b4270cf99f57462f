"""``widgetkit series`` and ``widgetkit verify`` on a series file: outputs and exit codes."""

import json

from widgetkit.cli import main


def test_series_runs_a_recipe_file_over_a_folder_and_verify_checks_it(
        recipe, series_dir, tmp_path, capsys):
    recipe.save(tmp_path / "r.json")
    out = tmp_path / "out"
    code = main(["series", str(tmp_path / "r.json"), str(series_dir), "--out", str(out),
                 "--workers", "2", "--variable", "set temperature", "--quiet"])
    text = capsys.readouterr().out
    assert code == 0, text
    assert "6 spectra: 6 ok, 0 doubtful, 0 failed" in text
    for name in ("series.json", "constants.csv", "recipe.json"):
        assert (out / name).exists()
    assert len(list((out / "sessions").iterdir())) == 6
    assert main(["verify", str(out / "series.json"), "--workers", "1"]) == 0
    assert "verified: all 6 sessions" in capsys.readouterr().out
    assert main(["verify", str(out)]) == 0  # the folder will do

    path = out / "sessions" / sorted(p.name for p in (out / "sessions").iterdir())[3]
    doc = json.loads(path.read_text())
    doc["steps"][2]["params"]["degree"] = 3  # a different baseline than recorded
    path.write_text(json.dumps(doc))
    assert main(["verify", str(out / "series.json"), "--workers", "1"]) == 1
    assert "NOT verified: 1 of 6" in capsys.readouterr().out


def test_a_saved_session_serves_as_the_recipe_and_failures_exit_1(
        reference, series_dir, tmp_path, capsys):
    reference.save(tmp_path / "worked-out.session.json")
    (tmp_path / "broken.jdx").write_text("##TITLE=nothing here\n##END=\n")
    code = main(["series", str(tmp_path / "worked-out.session.json"),
                 str(sorted(series_dir.iterdir())[0]), str(tmp_path / "broken.jdx"),
                 "--out", str(tmp_path / "out"), "--workers", "1", "--quiet"])
    text = capsys.readouterr().out
    assert code == 1
    assert "2 spectra: 1 ok, 0 doubtful, 1 failed" in text
    assert "broken.jdx: failed: step 0 (load)" in text


def test_the_series_command_refuses_what_it_cannot_start_with_exit_2(
        recipe, series_dir, tmp_path, capsys):
    assert main(["series", str(tmp_path / "none.json"), str(series_dir), "--out",
                 str(tmp_path / "o")]) == 2
    assert "no such recipe file" in capsys.readouterr().err
    (tmp_path / "junk.json").write_text("{not json")
    assert main(["series", str(tmp_path / "junk.json"), str(series_dir), "--out",
                 str(tmp_path / "o")]) == 2
    assert "cannot read the recipe" in capsys.readouterr().err
    recipe.save(tmp_path / "r.json")
    assert main(["series", str(tmp_path / "r.json"), str(tmp_path / "*.nothing"), "--out",
                 str(tmp_path / "o"), "--quiet"]) == 2
    assert "matches no file" in capsys.readouterr().err
    assert main(["series", str(tmp_path / "r.json"), str(series_dir), "--out", str(tmp_path / "o"),
                 "--workers", "0"]) == 2
    assert "workers must be" in capsys.readouterr().err


def test_verify_exits_2_for_an_unreadable_series_file(tmp_path, capsys):
    bad = tmp_path / "series.json"
    bad.write_text('{"format": "widgetkit-series", "version": 1, "spectra": 3}')
    assert main(["verify", str(bad)]) == 2
    assert "field spectra" in capsys.readouterr().err
