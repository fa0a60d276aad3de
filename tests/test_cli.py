"""Tests of the ``climwidgets`` command (climwidgets/cli.py), run in-process via main().

Each command runs on the demo generated at size="test"; outputs are compared with the
public compute functions called directly (the numbers themselves are checked against
outside references in tests/test_jobs.py and the compute modules' own tests).  Bad input
must exit 2 with one readable line naming the problem; an internal error exits 1.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import climwidgets as cw
from climwidgets import cli, demo
from climwidgets.report.tables import read_csv


def run(capsys, *argv):
    code = cli.main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _error_line(err: str) -> str:
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err  # one readable line, no traceback
    return lines[0]


# ------------------------------------------------------------------ help
def test_help_lists_commands_and_exit_codes(capsys):
    code, out, _ = run(capsys, "--help")
    assert code == 0
    for word in ("demo", "info", "summary", "extremes", "compare", "exit codes"):
        assert word in out
    for command in ("demo", "info", "summary", "extremes", "compare"):
        code, out, _ = run(capsys, command, "--help")
        assert code == 0 and "--quiet" in out


def test_installed_console_script_runs():
    script = Path(sys.executable).parent / "climwidgets"
    if not script.exists():
        pytest.skip("the climwidgets console script is not installed in this environment")
    done = subprocess.run([str(script), "--help"], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert "usage: climwidgets" in done.stdout and "summary" in done.stdout


# ------------------------------------------------------------------ info
def test_info_describes_what_the_loader_sees(capsys, demo_files):
    code, out, err = run(capsys, "info", demo_files["coarse_monthly"])
    assert code == 0, err
    assert "kg m-2 s-1" in out and "calendar: noleap" in out and "time step:    month" in out
    assert "rectilinear 8 x 10" in out and "missing data: not counted" in out
    code, out, _ = run(capsys, "info", demo_files["monthly"], "--scan")
    assert code == 0 and "missing data: 0.00% of values" in out


# ------------------------------------------------------------------ summary
@pytest.fixture(scope="module")
def summary_run(demo_files, tmp_path_factory):
    out = tmp_path_factory.mktemp("cli_summary")
    argv = [
        "summary",
        "--data",
        demo_files["daily"],
        "--basins",
        demo_files["basins"],
        "--months",
        "7,8",
        "--baseline",
        "1991-2020",
        "--out",
        out,
    ]
    import contextlib
    import io

    stdout, stderr = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(stdout), contextlib.redirect_stderr(stderr):
        code = cli.main([str(a) for a in argv])
    return code, stdout.getvalue(), stderr.getvalue(), argv


def test_summary_writes_paths_on_stdout_and_progress_on_stderr(summary_run, demo_files):
    code, out, err, _ = summary_run
    assert code == 0, err
    paths = [Path(p) for p in out.splitlines()]
    assert [p.name for p in paths] == ["basin_summary.csv", "seasonal_share_normals.nc", "basin_report.html"]
    assert all(p.is_file() for p in paths)
    assert "summary:" in err and "one pass" in err
    table = read_csv(paths[0], index_col=0)
    pr = cw.open_precip(demo_files["daily"])
    direct = cw.basin_summary(pr, cw.Basin.from_geojson(demo_files["basins"]), months=(7, 8), baseline=(1991, 2020))
    pd.testing.assert_frame_equal(table.astype(float), direct.astype(float), rtol=1e-9, check_names=False)


def test_summary_refuses_existing_outputs(capsys, summary_run):
    _, out, _, argv = summary_run
    csv = Path(out.splitlines()[0])
    stamp = csv.stat().st_mtime_ns
    code, _, err = run(capsys, *argv)
    assert code == 2
    line = _error_line(err)
    assert "basin_summary.csv" in line and "--overwrite" in line
    assert csv.stat().st_mtime_ns == stamp


@pytest.mark.parametrize(
    "change, words",
    [
        ({"--months": "7,13"}, ["--months", "13 is not a month number"]),
        ({"--months": "July"}, ["--months", "not a list of month numbers"]),
        ({"--baseline": "2020-1991"}, ["--baseline", "ends before it starts"]),
        ({"--baseline": "1950-1960"}, ["baseline", "outside the data"]),
        ({"--data": "MISSING"}, ["does not exist"]),
        ({"--basins": "NOT_GEOJSON"}, ["not valid JSON", "GeoJSON"]),
        ({"--basins": "MISSING_BASINS"}, ["basin file not found"]),
    ],
)
def test_summary_bad_input_exits_2_with_one_line(capsys, demo_files, tmp_path, change, words):
    (tmp_path / "basins.geojson").write_text("lon,lat\n1,2\n")
    replace = {
        "MISSING": tmp_path / "nothing.nc",
        "NOT_GEOJSON": tmp_path / "basins.geojson",
        "MISSING_BASINS": tmp_path / "nothing.geojson",
    }
    opts = {
        "--data": demo_files["daily"],
        "--basins": demo_files["basins"],
        "--months": "7,8",
        "--baseline": "1991-2020",
        "--out": tmp_path / "out",
    }
    opts.update({k: replace.get(v, v) for k, v in change.items()})
    code, out, err = run(capsys, "summary", *[x for kv in opts.items() for x in kv], "--quiet")
    assert code == 2 and out == ""
    line = _error_line(err)
    assert line.startswith("climwidgets summary: ")
    for w in words:
        assert w in line
    assert not (tmp_path / "out").exists()


def test_argparse_errors_exit_2(capsys):
    code, _, err = run(capsys, "summary", "--data", "x.nc")
    assert code == 2 and "--basins" in err
    code, _, err = run(capsys, "frobnicate")
    assert code == 2 and "invalid choice" in err


def test_internal_error_exits_1(capsys, monkeypatch, demo_files, tmp_path):
    from climwidgets import jobs

    def broken(*args, **kwargs):
        raise RuntimeError("boom")

    monkeypatch.setattr(jobs, "run_summary", broken)
    code, _, err = run(
        capsys, "summary", "--data", demo_files["daily"], "--basins", demo_files["basins"], "--out", tmp_path
    )
    assert code == 1 and "internal error (RuntimeError: boom)" in err


# ------------------------------------------------------------------ extremes
def test_extremes_prints_paths_and_cautions_even_when_quiet(capsys, demo_files, tmp_path):
    code, out, err = run(
        capsys,
        "extremes",
        "--data",
        demo_files["daily"],
        "--basins",
        demo_files["basins"],
        "--periods",
        "2,10",
        "--n-boot",
        "60",
        "--out",
        tmp_path,
        "--quiet",
    )
    assert code == 0, err
    paths = [Path(p) for p in out.splitlines()]
    assert [p.name for p in paths] == ["return_levels.nc", "basin_return_levels.csv"]
    for caution in cw.DESIGN_DEPTH_CAUTIONS:
        assert caution in err
    assert not any(line.startswith("extremes:") for line in err.splitlines())  # no progress with --quiet
    table = read_csv(paths[1], index_col=0)
    assert sorted(set(table["return_period_years"])) == [2, 10]
    assert set(table.index) == {b["name"] for b in demo.BASINS}
    pr = cw.open_precip(demo_files["daily"])
    b = cw.Basin.from_geojson(demo_files["basins"])[0]
    areal = cw.return_levels(cw.annual_maxima(cw.basin_mean(pr, b).compute()), periods=(2, 10), n_boot=60)
    np.testing.assert_allclose(table.loc[b.name, "areal_estimate_mm"].values, areal["estimate"].values, rtol=1e-9)


def test_extremes_bad_input(capsys, demo_files, tmp_path):
    code, _, err = run(capsys, "extremes", "--data", demo_files["monthly"], "--out", tmp_path)
    assert code == 2 and "daily or hourly" in _error_line(err)
    code, _, err = run(capsys, "extremes", "--data", demo_files["daily"], "--duration", "4", "--out", tmp_path)
    assert code == 2 and "duration_days=4" in _error_line(err)
    code, _, err = run(capsys, "extremes", "--data", demo_files["daily"], "--periods", "2,x", "--out", tmp_path)
    assert code == 2 and "--periods" in _error_line(err)


# ------------------------------------------------------------------ compare
def test_compare_writes_metrics_and_basin_table(capsys, demo_files, tmp_path):
    code, out, err = run(
        capsys,
        "compare",
        "--data",
        f"fine={demo_files['monthly']}",
        f"coarse={demo_files['coarse_monthly']}",
        "--basins",
        demo_files["basins"],
        "--out",
        tmp_path,
        "--quiet",
    )
    assert code == 0, err
    paths = [Path(p) for p in out.splitlines()]
    assert [p.name for p in paths] == ["comparison_metrics.nc", "products_basin_table.csv"]
    table = read_csv(paths[1], index_col=[0, 1])
    assert set(table.index.get_level_values("product")) >= {"fine", "coarse", "spread: max - min"}
    code, _, err = run(capsys, "compare", "--data", demo_files["monthly"], "--out", tmp_path / "x")
    assert code == 2 and "at least two" in _error_line(err)


def test_overwrite_replaces_and_quiet_silences(capsys, demo_files, tmp_path):
    argv = ["compare", "--data", demo_files["monthly"], demo_files["coarse_monthly"], "--out", tmp_path]
    code, out, err = run(capsys, *argv)
    assert code == 0 and "compare: monthly totals" in err
    code, _, err = run(capsys, *argv, "--quiet")
    assert code == 2 and "comparison_metrics.nc" in _error_line(err)
    code, out2, err = run(capsys, *argv, "--overwrite", "--quiet")
    assert code == 0 and err == "" and out2 == out


# ------------------------------------------------------------------ demo
def test_demo_headless_writes_summary_and_report(capsys, demo_files, summary_run, tmp_path):
    # the demo_* files are the demo's own and are replaced; other files are left alone
    (tmp_path / "notes.txt").write_text("mine")
    (tmp_path / "demo_basin_summary.csv").write_text("left from an earlier run")
    code, out, err = run(
        capsys,
        "demo",
        "--headless",
        "--dir",
        demo_files["daily"].parent,
        "--size",
        "test",
        "--out",
        tmp_path,
        "--quiet",
    )
    assert code == 0, err
    names = [Path(p).name for p in out.splitlines()]
    assert names == ["demo_basin_summary.csv", "demo_seasonal_share_normals.nc", "demo_basin_report.html"]
    assert (tmp_path / "notes.txt").read_text() == "mine"
    # the same job as `climwidgets summary` on the same file: the same table
    table = read_csv(tmp_path / "demo_basin_summary.csv", index_col=0)
    summary = read_csv(Path(summary_run[1].splitlines()[0]), index_col=0)
    pd.testing.assert_frame_equal(table, summary, rtol=1e-12)
    assert list(table.index) == [b["name"] for b in demo.BASINS]
    assert "invented data" in (tmp_path / "demo_basin_report.html").read_text(encoding="utf-8")


def test_demo_without_headless_prints_the_demo_files(capsys, demo_files):
    code, out, _ = run(capsys, "demo", "--dir", demo_files["daily"].parent, "--size", "test", "--quiet")
    assert code == 0
    assert {Path(p).name for p in out.splitlines()} == {p.name for p in demo_files.values()}


# ------------------------------------------------------------------ scenario
@pytest.fixture(scope="module")
def ensemble_files(demo_files):
    return demo_files | demo.generate_ensemble(demo_files["monthly"].parent, quiet=True, size="test")


def test_scenario_writes_basin_signals_and_prints_cautions(capsys, ensemble_files, tmp_path):
    demo_files = ensemble_files
    from climwidgets.analyses.scenario import basin_signals
    from climwidgets.compute.scenario import SCENARIO_CAUTIONS

    code, out, err = run(
        capsys,
        "scenario",
        "--hist",
        demo_files["ensemble_historical"],
        "--future",
        demo_files["ensemble_future"],
        "--basins",
        demo_files["basins"],
        "--out",
        tmp_path,
        "--quiet",
    )
    assert code == 0, err
    paths = [Path(p) for p in out.splitlines()]
    assert [p.name for p in paths] == ["scenario_basin_signals.csv", "scenario_report.html"]
    for caution in SCENARIO_CAUTIONS:
        assert caution in err
    # the report beside the CSV: cautions before the numbers, the inputs named
    page = paths[1].read_text(encoding="utf-8")
    assert page.index("Before using these numbers") < page.index("<table")
    assert Path(demo_files["ensemble_historical"]).name in page and Path(demo_files["ensemble_future"]).name in page
    for b in demo.BASINS:
        assert b["name"] in page
    table = read_csv(paths[0], index_col=0)
    assert set(table.index) == {b["name"] for b in demo.BASINS}
    hist, fut = cw.open_precip(demo_files["ensemble_historical"]), cw.open_precip(demo_files["ensemble_future"])
    expected = basin_signals(hist, fut, cw.load_basins(demo_files["basins"])).compute()
    for name in ("share_change_1_mean", "normal_change_1_lower", "normal_change_1_upper", "share_change_1_agreement"):
        np.testing.assert_allclose(table[name].values, expected[name].sel(basin=table.index).values, rtol=1e-9)
    # the per-member normal change of one basin equals the basin means' normals computed directly
    b = cw.load_basins(demo_files["basins"])[0]
    nh = cw.annual_normal(cw.basin_mean(hist, b), baseline=(1981, 2010))
    nf = cw.annual_normal(cw.basin_mean(fut, b), baseline=(2041, 2070))
    ratio = (nf / nh - 1.0).values
    np.testing.assert_allclose(table.loc[b.name, "normal_change_1_mean"], ratio.mean(), rtol=1e-9)


def test_scenario_bad_input_exits_2(capsys, ensemble_files, tmp_path):
    demo_files = ensemble_files
    code, _, err = run(
        capsys,
        "scenario",
        "--hist",
        demo_files["ensemble_historical"],
        "--future",
        demo_files["ensemble_future"],
        "--basins",
        demo_files["basins"],
        "--months",
        "7,13",
        "--out",
        tmp_path,
    )
    assert code == 2 and "13" in _error_line(err)
    code, _, err = run(
        capsys,
        "scenario",
        "--hist",
        demo_files["ensemble_historical"],
        "--future",
        demo_files["ensemble_future"],
        "--basins",
        demo_files["basins"],
        "--historical",
        "1981",
        "--out",
        tmp_path,
    )
    assert code == 2 and "--historical" in _error_line(err)


# ------------------------------------------------------------------ typos and refused folders
@pytest.mark.parametrize(
    "argv, words",
    [
        (["demo", "--size", "tset"], ["--size", "invalid choice 'tset'", "did you mean 'test'", "full, test"]),
        (["sumary"], ["'sumary'", "did you mean 'summary'"]),
        (["compare", "--data", "a.nc", "b.nc", "--method", "bilinaer"], ["did you mean 'bilinear'"]),
        (
            ["extremes", "--data", "x.nc", "--duration", "dayly"],
            ["--duration", "'dayly' is not a whole number", "duration in days"],
        ),
    ],
)
def test_typos_in_option_values_suggest_the_nearest_word(capsys, argv, words):
    code, out, err = run(capsys, *argv)
    assert code == 2 and out == ""
    last = err.strip().splitlines()[-1]
    for w in words:
        assert w in last, last


def test_nearest_word():
    # difflib.SequenceMatcher ratio 2*M/T (Python documentation, difflib): "dayly" vs "daily"
    # share 4 of 5 letters in order, 0.8 >= 0.6
    assert cli.nearest_word("dayly", ["hourly", "daily", "monthly"]) == "daily"
    assert cli.nearest_word("DAYLY", ["daily"]) == "daily"
    assert cli.nearest_word("xyz", ["daily"]) is None


@pytest.mark.parametrize("out", ["/proc", "/proc/out"])
def test_an_output_folder_that_takes_no_files_exits_2_before_reading(capsys, demo_files, tmp_path, out):
    code, stdout, err = run(
        capsys, "summary", "--data", tmp_path / "missing.nc", "--basins", demo_files["basins"], "--out", out, "--quiet"
    )
    assert code == 2 and stdout == ""
    line = _error_line(err)
    assert "/proc" in line and "does not accept new files" in line and "Fix: " in line and "[Errno" not in line


def test_os_errors_are_one_sentence_with_a_fix(capsys, monkeypatch, tmp_path):
    import errno

    from climwidgets import jobs

    def refused(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied", str(tmp_path / "pr.nc"))

    monkeypatch.setattr(jobs, "run_summary", refused)
    code, _, err = run(
        capsys, "summary", "--data", tmp_path / "pr.nc", "--basins", tmp_path / "b.geojson", "--out", tmp_path
    )
    line = _error_line(err)
    assert code == 2 and "[Errno" not in line
    assert (
        line == f"climwidgets summary: {tmp_path / 'pr.nc'}: Permission denied. Fix: check the permissions "
        "of the file or folder, or use another one."
    )


# ------------------------------------------------------------------ units
def test_summary_and_extremes_in_us_customary_units(capsys, demo_files, summary_run, tmp_path):
    """--units us: the CSVs hold inches, acre-feet and square miles (1 in = 25.4 mm, 1 acre-ft =
    1233.48183754752 m³, 1 mi² = 2.589988110336 km²; international yard and pound agreement
    1959, NIST SP 811; from memory), their metadata names the units, the report shows them."""
    from climwidgets.report.tables import read_metadata

    code, out, err = run(
        capsys,
        "summary",
        "--data",
        demo_files["daily"],
        "--basins",
        demo_files["basins"],
        "--months",
        "7,8",
        "--baseline",
        "1991-2020",
        "--units",
        "us",
        "--out",
        tmp_path / "s",
        "--quiet",
    )
    assert code == 0, err
    csv_path, _, report = [Path(p) for p in out.splitlines()]
    us = read_csv(csv_path, index_col=0)
    si = read_csv(Path(summary_run[1].splitlines()[0]), index_col=0).loc[us.index]
    np.testing.assert_allclose(us["annual_mean_in"], si["annual_mean_mm"] / 25.4, rtol=1e-12)
    np.testing.assert_allclose(us["area_mi2"], si["area_km2"] / 2.589988110336, rtol=1e-12)
    np.testing.assert_allclose(us["volume_per_year_acre_ft"], si["volume_per_year_m3"] / 1233.48183754752, rtol=1e-12)
    assert "volume_per_year_m3" not in us.columns and "annual_mean_mm" not in us.columns
    meta = read_metadata(csv_path)
    assert meta["units"]["annual_mean_in"] == "in" and meta["units"]["volume_per_year_acre_ft"] == "acre-ft"
    assert meta["unit_system"].startswith("US customary")
    html = report.read_text()
    assert "acre-ft" in html and "(in)" in html and "US customary" in html

    code, out, err = run(
        capsys,
        "extremes",
        "--data",
        demo_files["daily"],
        "--basins",
        demo_files["basins"],
        "--periods",
        "2,10",
        "--n-boot",
        "60",
        "--units",
        "US",
        "--out",
        tmp_path / "e",
        "--quiet",
    )
    assert code == 0, err
    csv_path = Path(out.splitlines()[1])
    table = read_csv(csv_path, index_col=0)
    pr = cw.open_precip(demo_files["daily"])
    b = cw.Basin.from_geojson(demo_files["basins"])[0]
    areal = cw.return_levels(cw.annual_maxima(cw.basin_mean(pr, b).compute()), periods=(2, 10), n_boot=60)
    np.testing.assert_allclose(
        table.loc[b.name, "areal_estimate_in"].values, areal["estimate"].values / 25.4, rtol=1e-9
    )
    units = read_metadata(csv_path)["units"]
    assert units["areal_estimate_in"] == "in" and units["cell_mean_estimate_in"] == "in"

    code, _, err = run(
        capsys,
        "summary",
        "--data",
        demo_files["daily"],
        "--basins",
        demo_files["basins"],
        "--units",
        "imperial",
        "--out",
        tmp_path / "x",
    )
    assert code == 2 and "si" in err and "us" in err
