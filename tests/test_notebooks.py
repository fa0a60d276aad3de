"""Execute every notebook in notebooks/ top to bottom and check the numbers they report.

Notebooks print their key numbers as JSON in a cell tagged ``key-numbers``; the checks
recompute them here with the public functions on the same demo data (the small "test"
size of the invented scenario, generated once into a temporary folder).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import pytest

nbformat = pytest.importorskip("nbformat")
nbclient = pytest.importorskip("nbclient")

import climwidgets as cw  # noqa: E402

pytestmark = pytest.mark.slow

NOTEBOOKS = sorted((Path(__file__).resolve().parent.parent / "notebooks").glob("*.ipynb"))


@pytest.fixture(scope="module")
def demo(demo_files):
    return demo_files["daily"].parent, demo_files


CHECK_MIME = "application/vnd.climwidgets.check+json"


def _run(path: Path, demo_dir: Path, workdir: Path) -> dict | None:
    nb = nbformat.read(path, as_version=4)
    env = {"CLIMWIDGETS_DEMO_DIR": str(demo_dir), "CLIMWIDGETS_DEMO_SIZE": "test"}
    old = {k: os.environ.get(k) for k in env}
    os.environ.update(env)  # the kernel inherits the environment
    try:
        client = nbclient.NotebookClient(
            nb, timeout=300, kernel_name="python3", resources={"metadata": {"path": str(workdir)}}
        )
        client.execute()
    finally:
        for k, v in old.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
    for cell in nb.cells:
        if "key-numbers" in cell.get("metadata", {}).get("tags", []):
            for o in cell.outputs:  # handed over as a data output with no visible text
                if CHECK_MIME in o.get("data", {}):
                    data = o["data"][CHECK_MIME]
                    return json.loads(data) if isinstance(data, str) else dict(data)
            text = "".join(o.get("text", "") for o in cell.outputs if o.get("output_type") == "stream")
            return json.loads(text.strip().splitlines()[-1])
    return None


def _check_tour(key, pr, basins):
    for b in basins:
        ref = float(cw.seasonal_fraction(cw.basin_mean(pr, b), months=(7, 8)))
        assert key["share_jul_aug"][b.name] == pytest.approx(ref, rel=1e-9)
    table = cw.basin_summary(pr, basins)
    for name, value in key["annual_mean_mm"].items():
        assert value == pytest.approx(table.loc[name, "annual_mean_mm"], rel=1e-9)
    normal = cw.annual_normal(pr, baseline=(1991, 2020))
    for b in basins:
        assert key["drawer_mean_mm"][b.name] == pytest.approx(float(cw.basin_mean(normal, b)), rel=1e-6)


def _check_tour_more(key, paths, pr, basins):
    """The four later widgets in the tour report what the compute functions give."""
    spi = cw.spi(pr, scale=3)
    for b in basins:
        ref = float(cw.spi(cw.basin_mean(pr, b), scale=3).isel(time=-1))
        assert key["spi3_last"][b.name] == pytest.approx(ref, rel=1e-6, abs=1e-9)
    assert spi.sizes["time"] == pr.sizes["time"]
    daily = cw.open_precip(paths["daily"])
    for b in basins:
        levels = cw.return_levels(cw.annual_maxima(cw.basin_mean(daily, b), duration_days=1), n_boot=200)
        assert key["areal_100yr_mm"][b.name] == pytest.approx(float(levels["estimate"].sel(period=100)), rel=1e-6)
    products = {"fine": pr, "coarse": cw.open_precip(paths["coarse_monthly"])}
    aligned = cw.align(products)
    bias = float(cw.compare(aligned["fine"], aligned["coarse"])["bias"].mean())
    assert key["bias_mm_per_year"] == pytest.approx(bias, rel=1e-9)
    assert 0 < key["ratio_first_band"] < 1  # the demo's lee side is drier than its windward side


def _check_data_team(key, paths, pr, basins):
    coarse = cw.open_precip(paths["coarse_monthly"])
    products = {"fine": pr, "coarse": coarse}
    aligned = cw.align(products)
    bias = float(cw.compare(aligned["fine"], aligned["coarse"])["bias"].mean())
    assert key["domain_mean_bias_mm_per_year"] == pytest.approx(bias, rel=1e-9)
    assert key["widget_domain_mean_bias_mm_per_year"] == pytest.approx(bias, rel=1e-9)
    table = cw.products_basin_table(products, basins, months=(7, 8))
    assert key["spread_mm"] == pytest.approx(table.loc[(key["basin"], "spread: max - min"), "annual_mean_mm"], rel=1e-9)
    from climwidgets.demo import COARSE_BIAS

    for month, factor in key["monthly_factor"].items():  # the bias the demo generator put in
        assert factor == pytest.approx(COARSE_BIAS[int(month)], abs=2e-3)


def _check_analyst(key, pr, basins):
    for b in basins:
        series = cw.basin_mean(pr, b)
        share = float(cw.seasonal_fraction(series, months=(7, 8)))
        slope = float(cw.trend(cw.seasonal_fraction(series, months=(7, 8), per_year=True))["slope"])
        assert key["share_percent"][b.name] == pytest.approx(100 * share, rel=1e-9)
        assert key["widget_share"][b.name] == pytest.approx(share, rel=1e-9)
        assert key["slope"][b.name] == pytest.approx(1000 * slope, rel=1e-9)


def _check_planner(key, pr, basins):
    table = cw.basin_summary(pr, basins, months=(7, 8), baseline=(1991, 2020))
    delta = cw.scenario_delta(pr, basins, months=(11, 12, 1, 2, 3), percent=10.0)
    for b in basins:
        assert key["annual_mean_mm"][b.name] == pytest.approx(table.loc[b.name, "annual_mean_mm"], rel=1e-9)
        assert key["delta_m3"][b.name] == pytest.approx(delta.loc[b.name, "delta_volume_per_year_m3"], rel=1e-9)
        assert key["widget_delta_m3"][b.name] == pytest.approx(key["delta_m3"][b.name], rel=1e-12)


CHECKS = {
    "tour": _check_tour,
    "analyst_summer_share": _check_analyst,
    "planner_basin_report": _check_planner,
    "data_team_comparison": _check_data_team,
}
NEEDS_PATHS = {"data_team_comparison"}


@pytest.mark.parametrize("path", NOTEBOOKS, ids=[p.stem for p in NOTEBOOKS])
def test_notebook_runs_and_reports_the_computed_numbers(path, demo, tmp_path):
    folder, paths = demo
    key = _run(path, folder, tmp_path)
    check = CHECKS.get(path.stem)
    if check is None:
        return  # a notebook without registered checks must still run top to bottom
    assert key is not None, f"{path.name} has no cell tagged key-numbers"
    pr = cw.open_precip(paths["monthly"])
    basins = cw.Basin.from_geojson(paths["basins"])
    if path.stem in NEEDS_PATHS:
        check(key, paths, pr, basins)
    else:
        check(key, pr, basins)
    if path.stem == "tour":
        _check_tour_more(key, paths, pr, basins)
