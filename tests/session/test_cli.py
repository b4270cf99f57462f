import json

from widgetkit.cli import main


def test_verify_exits_0_on_a_good_file_1_on_a_changed_one_and_2_on_an_unreadable_one(
        session, tmp_path, capsys):
    session.crop(2750, 3050)
    good = tmp_path / "good.json"
    session.save(good)
    assert main(["verify", str(good)]) == 0
    assert "verified" in capsys.readouterr().out

    doc = json.loads(good.read_text())
    doc["steps"][1]["params"]["hi"] = 3000.0
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps(doc))
    assert main(["verify", str(bad)]) == 1
    assert "step 1 (crop)" in capsys.readouterr().out

    junk = tmp_path / "junk.json"
    junk.write_bytes(b"\x00\x01 not json")
    assert main(["verify", str(junk)]) == 2
    assert main(["verify", str(tmp_path / "missing.json")]) == 2
