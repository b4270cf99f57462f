"""run_series: truth, identical results on every executor, failures isolated, re-runs."""

import logging
import os
import shutil

import numpy as np
import pytest

import widgetkit as wk

from .simulated import CONSTANTS, TEMPERATURES, constants_of, simulate, write_series


def _truth() -> dict:
    """Band constants of H35Cl implied by the handbook constants the spectra were simulated
    from (Huber & Herzberg 1979, in wk.simulate.HANDBOOK, from memory): G(v) and B_v of
    Herzberg, *Spectra of Diatomic Molecules* (1950), as computed by wk.levels."""
    c = CONSTANTS
    G = wk.levels.vib_term([0, 1], c["omega_e"], c["omega_e_x_e"], c["omega_e_y_e"])
    Bv = wk.levels.rot_constant([0, 1], c["B_e"], c["alpha_e"], c["gamma_e"])
    return {"band_origin": G[1] - G[0], "B_lower": Bv[0], "B_upper": Bv[1]}


def test_every_spectrum_gives_its_constants_within_three_standard_errors(serial_run):
    t = serial_run.table
    assert serial_run.counts() == {"ok": len(TEMPERATURES), "doubtful": 0, "failed": 0}
    for name, want in _truth().items():
        rows = t[(t["name"] == name) & (t["isotopologue"] == "1H-35Cl")]
        assert len(rows) == len(TEMPERATURES)
        z = (rows["value"] - want) / rows["stderr"]
        assert np.all(np.abs(z) < 3), (name, z.round(2).tolist())
    rows = t[(t["name"] == "T_rot")]
    assert len(rows) == 2 * len(TEMPERATURES)        # both isotopologues
    z = (rows["value"] - rows["variable"]) / rows["stderr"]  # simulated at the set temperature
    assert np.all(np.abs(z) < 3), z.round(2).tolist()


def test_the_table_is_tidy_with_the_series_variable_read_from_the_header(serial_run):
    t = serial_run.table
    for col in ("source", "sha256", "variable", "isotopologue", "name", "value", "stderr", "unit",
                "status"):
        assert col in t.columns
    assert sorted(set(t["variable"])) == list(TEMPERATURES)
    assert serial_run.variable.unit == "K" and serial_run.variable.name == "set temperature"
    one = t[t["spectrum"] == t["spectrum"].iloc[0]]
    assert one["name"].is_unique is False  # one row per constant and isotopologue
    assert set(one["sha256"]) == {wk.series.sources.file_sha256(one["source"].iloc[0])}


def test_the_process_pool_gives_the_serial_numbers(serial_run, recipe, series_dir, tmp_path):
    pool = wk.run_series(recipe, series_dir, variable="set temperature", workers=2,
                         progress=False, out=tmp_path)
    np.testing.assert_allclose(constants_of(pool), constants_of(serial_run), rtol=1e-9)
    assert list(pool.spectra["status"]) == list(serial_run.spectra["status"])


@pytest.fixture
def dask_client():
    """A Dask client of a LocalCluster started here: one worker process with one thread (the
    tasks still cross a process boundary, as on a cluster, and the test stays light on a
    shared machine), timeouts generous enough for a loaded machine, and the client and the
    cluster always closed, also when the test fails."""
    distributed = pytest.importorskip("distributed")
    import dask

    slow = {"distributed.comm.timeouts.connect": "300s", "distributed.comm.timeouts.tcp": "300s",
            "distributed.deploy.lost-worker-timeout": "300s"}
    with dask.config.set(slow):
        cluster = distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                                           dashboard_address=":0", silence_logs=logging.ERROR)
        try:
            client = distributed.Client(cluster, timeout="300s")
            try:
                yield client
            finally:
                client.close(timeout=120)
        finally:
            cluster.close(timeout=120)


def test_a_dask_local_cluster_gives_the_serial_numbers(serial_run, recipe, series_dir, tmp_path,
                                                       dask_client):
    res = wk.run_series(recipe, series_dir, variable="set temperature", client=dask_client,
                        progress=False, out=tmp_path)
    np.testing.assert_allclose(constants_of(res), constants_of(serial_run), rtol=1e-9)
    assert list(res.spectra["status"]) == list(serial_run.spectra["status"])


def test_a_corrupt_file_in_the_middle_is_reported_and_the_rest_complete(recipe, tmp_path):
    folder = tmp_path / "cell"
    write_series(folder, TEMPERATURES[:3])
    bad = folder / "cell_01_328K.jdx"
    bad.write_bytes(bad.read_bytes()[:2000] + b"\x00garbage\xff" * 50)
    res = wk.run_series(recipe, folder, variable="set temperature", workers=2, progress=False,
                        out=tmp_path / "out")
    rows = res.spectra.set_index("spectrum")
    assert rows.loc["cell_01_328K.jdx", "status"] == "failed"
    assert rows.loc["cell_01_328K.jdx", "reasons"].startswith("step 0 (load)")
    assert str(bad) in rows.loc["cell_01_328K.jdx", "reasons"]
    assert "warm start" not in rows.loc["cell_01_328K.jdx", "notes"]  # no use for a bad file
    assert list(rows.drop("cell_01_328K.jdx")["status"]) == ["ok", "ok"]
    t = res.table
    assert t.loc[t["spectrum"] == "cell_01_328K.jdx", "name"].isna().all()  # kept as a row


def test_a_rerun_skips_finished_spectra_and_reruns_a_changed_one(recipe, tmp_path):
    folder = tmp_path / "cell"
    paths = write_series(folder, TEMPERATURES[:3])
    out = tmp_path / "out"
    first = wk.run_series(recipe, folder, variable="set temperature", workers=1, progress=False,
                          out=out)
    mtimes = {p.name: p.stat().st_mtime_ns for p in (out / "sessions").iterdir()}
    again = wk.run_series(recipe, folder, variable="set temperature", workers=1, progress=False,
                          out=out)
    assert {p.name: p.stat().st_mtime_ns for p in (out / "sessions").iterdir()} == mtimes
    assert list(again.spectra["seconds"]) == list(first.spectra["seconds"])  # reused entries
    # a changed source is run again; the others are still skipped
    other = write_series(tmp_path / "other", (TEMPERATURES[0], 350.0), seed0=900)
    os.replace(other[1], paths[1])  # same name, other data
    third = wk.run_series(recipe, folder, variable="set temperature", workers=1, progress=False,
                          out=out)
    changed = (out / "sessions").joinpath(os.path.basename(third.sessions.path(1)))
    assert changed.stat().st_mtime_ns != mtimes[changed.name]
    assert third.spectra["sha256"].iloc[1] != first.spectra["sha256"].iloc[1]
    untouched = [n for n in mtimes if n != changed.name]
    assert all((out / "sessions" / n).stat().st_mtime_ns == mtimes[n] for n in untouched)


def test_a_different_recipe_runs_every_spectrum_again(reference, tmp_path):
    folder = tmp_path / "cell"
    write_series(folder, TEMPERATURES[:2])
    out = tmp_path / "out"
    first = wk.run_series(reference.recipe(), folder, workers=1, progress=False, out=out)
    other = reference.replay_with(2, min_snr=12).recipe()
    second = wk.run_series(other, folder, workers=1, progress=False, out=out)
    assert second._doc["recipe_sha256"] != first._doc["recipe_sha256"]
    assert all(a != b for a, b in zip(first.spectra["seconds"], second.spectra["seconds"]))


def test_in_memory_spectra_run_without_an_output_folder(recipe):
    sps = [simulate(T, 40 + i) for i, T in enumerate((300.0, 400.0))]
    res = wk.run_series(recipe, sps, variable="simulated.params.temperature", workers=1,
                        progress=False)
    folder = res.folder
    assert folder.exists() and res.temporary
    assert list(res.spectra["variable"]) == [300.0, 400.0]
    assert res.sessions[1].constants.equals(res.sessions["test cell at 400 K"].constants)
    del res
    import gc

    gc.collect()
    assert not folder.exists()  # the temporary folder goes with the result


def test_bad_arguments_are_refused_before_any_work(recipe, series_dir, tmp_path):
    with pytest.raises(wk.SeriesError, match="workers"):
        wk.run_series(recipe, series_dir, workers=0, progress=False)
    with pytest.raises(wk.SeriesError, match="matches no file"):
        wk.run_series(recipe, str(tmp_path / "*.jdx"), progress=False)
    with pytest.raises(wk.SeriesError, match="holds no spectrum files"):
        wk.run_series(recipe, tmp_path, progress=False)
    with pytest.raises(wk.SeriesError, match="recipe must be"):
        wk.run_series(42, series_dir, progress=False)
    with pytest.raises(wk.SeriesError, match="client must be"):
        wk.run_series(recipe, series_dir, client=3.5, progress=False)
    assert not any(tmp_path.iterdir())  # nothing written


def test_a_missing_file_is_one_failed_row(recipe, series_dir, tmp_path):
    files = sorted(str(p) for p in series_dir.iterdir())[:2] + [str(tmp_path / "gone.jdx")]
    res = wk.run_series(recipe, files, workers=1, progress=False, out=tmp_path / "o")
    assert list(res.spectra["status"]) == ["ok", "ok", "failed"]
    assert "no such file" in res.spectra["reasons"].iloc[2]


def test_the_sessions_of_a_series_are_auditable_and_say_where_they_came_from(serial_run, recipe):
    s = serial_run.sessions[2]
    assert s.history[1].kind == "note" and recipe.sha256[:12] in s.history[1].params["text"]
    assert [st.kind for st in s.history[2:]] == [st.kind for st in recipe.steps]
    assert s.verify().ok


def test_a_series_is_saved_and_reopened(serial_run, tmp_path):
    path = serial_run.save(tmp_path / "copy")
    assert (tmp_path / "copy" / "constants.csv").exists()
    assert (tmp_path / "copy" / "recipe.json").exists()
    back = wk.SeriesResult.load(path)
    assert back.table.equals(serial_run.table)
    assert back.verify(progress=False, workers=2).ok
    shutil.rmtree(tmp_path / "copy" / "sessions")
    with pytest.raises(FileNotFoundError):
        back.sessions[0]


def test_an_interrupted_run_keeps_what_it_finished_and_a_rerun_completes_it(
        recipe, series_dir, tmp_path, monkeypatch):
    import widgetkit.series.runner as runner

    real, calls = runner.run_one, []

    def stopped_at_the_third(task):  # Ctrl-C while the third spectrum runs
        calls.append(task["name"])
        if len(calls) == 3:
            raise KeyboardInterrupt
        return real(task)

    files = sorted(series_dir.iterdir())[:4]
    monkeypatch.setattr(runner, "run_one", stopped_at_the_third)
    part = wk.run_series(recipe, files, workers=1, progress=False, out=tmp_path)
    assert part.interrupted and len(part) == 2
    assert part._doc["complete"] is False
    monkeypatch.setattr(runner, "run_one", real)
    done = wk.run_series(recipe, files, workers=1, progress=False, out=tmp_path)
    assert not done.interrupted and len(done) == 4 and done._doc["complete"] is True
    assert list(done.spectra["seconds"])[:2] == list(part.spectra["seconds"])  # not run again
