"""Batch jobs: the suite's analyses from files to files, without a browser.

Each ``run_*`` function reads precipitation files and a basin outline file, computes with
the public compute and geo functions, and writes its outputs into one folder.  The
``climwidgets`` command (:mod:`climwidgets.cli`) and the headless demo call these
functions and nothing else, so a script, the command line and ``make demo`` give the
same numbers.

Every job

* checks its parameters and its output paths *before* reading any data, so a typo or an
  existing output fails in a second, not after the long computation;
* refuses to replace existing outputs unless ``overwrite=True``, and checks that the
  output folder takes new files, before reading any data;
* writes all its outputs or none: every file (CSV, its ``.csv-metadata.json``, NetCDF,
  HTML) goes into one staging folder beside the destination and all are moved into place
  together at the end (:func:`climwidgets.atomic.staged_outputs`), so a failure or an
  interrupt part-way leaves the previous set as it was and nothing that the next run
  would refuse to replace; temporaries left by a killed earlier run are removed;
* reads each input once for the heavy part (one dask graph, one ``compute``) and works
  on the small results afterwards;
* reports progress through ``progress(text)`` when a callable is given (None: silent);
* returns a :class:`JobResult`: the written paths, the main table, and the cautions that
  go with the figures.
"""

from __future__ import annotations

import contextlib
import os
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import pandas as pd

from .errors import ParameterError
from .geo.basinset import load_basins

__all__ = [
    "JobResult",
    "load_basins",
    "run_summary",
    "run_extremes",
    "run_compare",
    "run_demo_headless",
    "run_scenario",
    "SUMMARY_FILES",
    "EXTREMES_FILES",
    "COMPARE_FILES",
    "SCENARIO_FILES",
]

Progress = Callable[[str], None] | None

#: Output file names by key (a job's ``prefix`` is put in front of each).
SUMMARY_FILES = {"csv": "basin_summary.csv", "netcdf": "seasonal_share_normals.nc", "report": "basin_report.html"}
EXTREMES_FILES = {"netcdf": "return_levels.nc", "csv": "basin_return_levels.csv"}
COMPARE_FILES = {"netcdf": "comparison_metrics.nc", "csv": "products_basin_table.csv"}
SCENARIO_FILES = {"csv": "scenario_basin_signals.csv", "report": "scenario_report.html"}
SCENARIO_DEPTH_FILE = "scenario_design_depths.csv"  # with daily or hourly runs

_STEP_WORD = {"hour": "hourly", "day": "daily", "month": "monthly"}

AREAL_NOTE = (
    "basin depths are areal: the return level of the basin-mean annual maxima, lower than "
    "point (gauge) depths of the same return period; cell_mean_estimate_mm is the basin mean "
    "of the cells' own return levels"
)  # the CSV's note: analyses.extremes.AREAL_NOTE + the extra column


@dataclass
class JobResult:
    """What a job wrote: ``paths`` (key -> Path, in writing order), the main ``table``
    (as written to the CSV) and the ``cautions`` that go with the figures."""

    paths: dict = field(default_factory=dict)
    table: pd.DataFrame | None = None
    cautions: tuple = ()


# ------------------------------------------------------------------ progress
class _Reporter:
    """Stage messages with elapsed time; silent when ``progress`` is None."""

    def __init__(self, progress: Progress, job: str):
        self.progress, self.job, self.t0 = progress, job, time.perf_counter()

    def __call__(self, text: str):
        if self.progress is not None:
            self.progress(f"{self.job}: {text} [{time.perf_counter() - self.t0:.1f} s]")

    def dask(self, what: str):
        """A context in which dask computations report 25/50/75/100 % of their tasks."""
        if self.progress is None:
            return contextlib.nullcontext()
        from .scale import TaskProgress

        quarters = {"next": 25}

        def on_fraction(fraction):
            pct = int(100 * fraction)
            if pct >= quarters["next"]:
                self(f"{what}: {pct} % of the tasks")
                quarters["next"] = (pct // 25 + 1) * 25

        self(f"{what} ...")
        return TaskProgress(on_fraction, step=0.01)


# ------------------------------------------------------------------ checks and inputs
def _check_months(months, job):
    from .compute._time import check_months

    return check_months(months, job)


def _check_baseline(baseline, job, name="baseline"):
    from .compute._time import check_year_range

    return check_year_range(tuple(baseline) if isinstance(baseline, list) else baseline, job, name)


def _plan_outputs(out_dir, names: dict, prefix: str, overwrite: bool, job: str) -> dict[str, Path]:
    """The output paths; fails now if the folder is a file, takes no files or an output exists."""
    from .atomic import OutputExistsError, check_folder
    from .report.tables import metadata_path

    if not isinstance(out_dir, (str, os.PathLike)) or str(out_dir) == "":
        raise ParameterError(
            f"out_dir={out_dir!r} is not a folder path",
            source=job,
            variable="out_dir",
            expected="a folder path",
            fix="pass e.g. out_dir='out'",
        )
    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise ParameterError(
            "is a file, not a folder",
            source=out,
            variable="out_dir",
            expected="a folder for the outputs",
            fix="choose another --out folder",
        )
    check_folder(out, f"{job} outputs")  # /proc, a read-only disk: refused before any data are read
    paths = {key: out / f"{prefix}{name}" for key, name in names.items()}
    if not overwrite:
        # a CSV's metadata file is part of the output too
        every = [p for p in paths.values()] + [metadata_path(p) for p in paths.values() if p.suffix == ".csv"]
        existing = [p.name for p in every if os.path.lexists(p)]
        if existing:
            raise OutputExistsError(
                f"{', '.join(existing)} already exist(s) and was left untouched",
                source=out,
                expected="outputs that do not exist yet",
                fix="pass --overwrite (overwrite=True) to replace them, or choose another output folder",
            )
    return paths


@contextlib.contextmanager
def _staged(paths: dict, overwrite: bool, job: str):
    """The paths inside a staging folder; at the end all files move to ``paths`` together."""
    from .atomic import remove_stale_temporaries, staged_outputs

    folder = next(iter(paths.values())).parent
    with staged_outputs(folder, overwrite, f"the {job} outputs") as stage:
        for p in paths.values():  # temporaries a killed run left beside the outputs
            remove_stale_temporaries(p)
        yield {key: stage / p.name for key, p in paths.items()}


def _open(data, var=None):
    from .io.loader import open_precip

    if isinstance(data, (list, tuple)) and len(data) == 1:
        data = data[0]
    return open_precip(data, var=var)


def _sources(pr) -> list[str]:
    return [s for s in str(pr.attrs.get("sources", "")).split("; ") if s]


# ------------------------------------------------------------------ summary
def run_summary(
    data,
    basins,
    months=(7, 8),
    baseline=(1991, 2020),
    out_dir="out",
    overwrite: bool = False,
    progress: Progress = None,
    *,
    var=None,
    year_start: int = 1,
    title: str | None = None,
    prefix: str = "",
    figures: bool = True,
    what_if_percent: float | None = None,
    what_if_months=None,
    units: str = "SI",
) -> JobResult:
    """Basin summary table (CSV), seasonal-share and normals maps (NetCDF) and HTML report.

    Parameters
    ----------
    data
        Precipitation file(s) for :func:`cw.open_precip`: a path, a glob pattern, or a list
        of paths that are parts of one record (joined along time).
    basins
        GeoJSON or shapefile path (or Basin objects).
    months, baseline, year_start
        The season, the normal period and the first month of the 12-month year.
    out_dir
        Output folder (created if absent).  Writes ``basin_summary.csv`` (the table of
        :func:`cw.basin_summary`, units in column names, provenance header),
        ``seasonal_share_normals.nc`` (``seasonal_share`` map and monthly ``normals``) and
        ``basin_report.html``; ``prefix`` is put in front of each name.
    overwrite
        Replace existing outputs.
    what_if_percent, what_if_months
        With a percentage, the report also holds the seasonal what-if (:func:`cw.what_if`):
        the season ``what_if_months`` (default ``months``) changed by that percentage.
    units
        "SI" (default; the CSV holds the stored numbers: mm, m³, km²) or "US": the CSV holds
        inches, acre-feet and square miles (its metadata names each column's units) and the
        report shows them.

    The report is :func:`report.content.report_content`, the one function behind the
    page's and the notebook's report too.  The data are read once: :func:`cw.basin_table`
    (built on :func:`cw.climatology_bundle`) gives the table, the report's figures and the
    maps in one ``compute``, and the CSV, the NetCDF and the report are written from that one
    result.
    """

    from .analyses.basins import basin_table, summary_bundle, what_if
    from .analyses.run import compute
    from .compute._time import check_year_start
    from .report.content import report_content
    from .report.html import write_report
    from .report.netcdf import to_netcdf
    from .report.tables import to_csv

    from .analyses.meta import to_units, unit_system

    job = "summary"
    units = unit_system(units, job)
    months = _check_months(months, job)
    baseline = _check_baseline(baseline, job)
    year_start = check_year_start(year_start, job)
    paths = _plan_outputs(out_dir, SUMMARY_FILES, prefix, overwrite, job)
    say = _Reporter(progress, job)
    basin_list = load_basins(basins)
    pr = _open(data, var)
    sources = _sources(pr)
    say(f"{len(basin_list)} basin(s); {_STEP_WORD.get(pr.attrs['step'], pr.attrs['step'])} data {dict(pr.sizes)}")

    bundle = summary_bundle(pr, months=months, baseline=baseline, year_start=year_start)
    what = None
    if what_if_percent is not None:
        what = what_if(
            pr,
            basin_list,
            months=_check_months(what_if_months or months, job),
            percent=float(what_if_percent),
            year_start=year_start,
            bundle=bundle,
        )
    lazy = (
        basin_table(pr, basin_list, months=months, baseline=baseline, year_start=year_start, bundle=bundle),
        bundle[["seasonal_share", "normals"]],
        what,
    )
    with say.dask("basin table, seasonal share and normals in one pass"):
        analysis, maps, what = compute(*lazy)

    say("basin table and report")
    content = report_content(
        analysis, basin_list, pr, what=what, sources=sources, title=title or "Basin precipitation summary"
    )
    table = to_units(content.table, units)

    notes = [f"data: {pr.attrs.get('conversion', '')}".strip(), analysis.attrs["area"]]
    maps.attrs = {
        "months": list(months),
        "baseline": list(baseline),
        "year_start": year_start,
        "history": bundle.attrs.get("history", ""),
        "input_files": "; ".join(sources),
    }
    with _staged(paths, overwrite, job) as staged:
        to_csv(table, staged["csv"], provenance={"inputs": sources, "notes": notes, "title": "basin summary"})
        to_netcdf(maps, staged["netcdf"], title="Seasonal share and monthly normals")
        say("writing the report")
        write_report(content, staged["report"], figures=figures, units=units)
    return JobResult(paths=paths, table=table, cautions=tuple(content.cautions or ()))


# ------------------------------------------------------------------ extremes
def run_extremes(
    data,
    basins=None,
    duration_days=1,
    periods=(2, 10, 25, 50, 100),
    ci=0.9,
    n_boot=1000,
    out_dir="out",
    overwrite: bool = False,
    progress: Progress = None,
    *,
    var=None,
    year_start: int = 1,
    duration_hours=None,
    seed=0,
    prefix: str = "",
    units: str = "SI",
) -> JobResult:
    """Return-level maps (NetCDF) and a basin table with intervals (CSV).

    ``return_levels.nc`` holds :func:`cw.return_levels` of the per-cell annual maxima
    (``estimate``, ``lower``, ``upper`` over ``period``, plus the fitted ``loc``, ``scale``,
    ``shape``, and the design-depth cautions in its attributes).  With ``basins``,
    ``basin_return_levels.csv`` has one row per basin and return period: the areal depth
    (return level of the basin-mean annual maxima) with its interval, and the basin mean
    of the cells' own return levels.  The cautions (:data:`cw.DESIGN_DEPTH_CAUTIONS`) are
    in both files and in the result.  ``units="US"`` writes the basin depths in inches
    (the metadata names each column's units); the NetCDF keeps mm.
    """
    from .analyses.basins import basin_series
    import numpy as np

    from .analyses.extremes import areal_design_depths, depth_field, depth_table
    from .analyses.meta import describe
    from .analyses.run import compute
    from .compute.gev import _check_periods
    from .compute.warming import DESIGN_DEPTH_CAUTIONS
    from .report.netcdf import to_netcdf
    from .report.tables import to_csv

    from .analyses.meta import to_units, unit_system

    job = "extremes"
    units = unit_system(units, job)
    periods = tuple(int(p) if float(p).is_integer() else float(p) for p in _check_periods(periods).tolist())
    if not (isinstance(ci, (int, float)) and not isinstance(ci, bool) and 0 < ci < 1):
        raise ParameterError(
            f"ci={ci!r} is not a confidence level",
            source=job,
            variable="ci",
            expected="a number strictly between 0 and 1",
            fix="e.g. 0.9 for a 90 % interval",
        )
    if isinstance(n_boot, bool) or not isinstance(n_boot, int) or n_boot < 50:
        raise ParameterError(
            f"n_boot={n_boot!r} is too small for percentile intervals",
            source=job,
            variable="n_boot",
            expected="an integer of at least 50 (1000 or more for final numbers)",
            fix="e.g. --n-boot 1000",
        )
    names = EXTREMES_FILES if basins is not None else {"netcdf": EXTREMES_FILES["netcdf"]}
    paths = _plan_outputs(out_dir, names, prefix, overwrite, job)
    say = _Reporter(progress, job)
    basin_list = load_basins(basins) if basins is not None else []
    pr = _open(data, var)
    sources = _sources(pr)
    duration = {"duration_days": duration_days} if duration_hours is None else {"duration_hours": duration_hours}
    fit = dict(periods=periods, ci=float(ci), n_boot=int(n_boot), seed=seed)
    levels = depth_field(pr, year_start=year_start, **fit, **duration)  # checks step and duration before any read

    # one read of the data: the cells' return levels and every basin's mean series
    lazy = [levels, basin_series(pr, basin_list) if basin_list else None]
    cells = int(np.prod([n for d, n in levels.sizes.items() if d != "period"]))
    with say.dask(f"return levels of {cells} cells ({n_boot} bootstrap samples) and basin series in one pass"):
        levels, series = compute(*lazy)
    dur = levels.attrs.get("duration", "")
    with _staged(paths, overwrite, job) as staged:
        to_netcdf(levels, staged["netcdf"], title=f"Return levels of annual maximum {dur} precipitation")
        table = None
        if basin_list:
            say("basin return levels")
            depths = areal_design_depths(None, basin_list, year_start=year_start, series=series, **fit, **duration)
            depths["cell_mean_estimate_mm"] = describe(
                basin_series(levels["estimate"], basin_list).reset_coords(drop=True).rename(period="return_period"),
                "cell_mean_estimate_mm",
                label="basin mean of the cells' depths",
                units="mm",
                description="area-weighted basin mean of the cells' own return levels",
            )
            (depths,) = compute(depths)
            table = depth_table(depths)[["areal_estimate_mm", "areal_lower_mm", "areal_upper_mm"]]
            described = dict(table.attrs.get("columns") or {})
            described["cell_mean_estimate_mm"] = dict(depths["cell_mean_estimate_mm"].attrs)
            table["cell_mean_estimate_mm"] = depths["cell_mean_estimate_mm"].to_series()
            table = table.reset_index("return_period").rename(columns={"return_period": "return_period_years"})
            table["n_years"] = depths["n_years"].to_series().reindex(table.index).astype(int)
            table = table[
                [
                    "return_period_years",
                    "areal_estimate_mm",
                    "areal_lower_mm",
                    "areal_upper_mm",
                    "cell_mean_estimate_mm",
                    "n_years",
                ]
            ]
            table.attrs = {
                "duration": dur,
                "ci": float(ci),
                "n_boot": int(n_boot),
                "seed": seed,
                "year_start": year_start,
                "periods": list(periods),
                "interval": levels.attrs.get("interval_method", ""),
                "columns": described,
            }
            table = to_units(table, units)
            to_csv(
                table,
                staged["csv"],
                provenance={
                    "inputs": sources,
                    "notes": [AREAL_NOTE],
                    "cautions": DESIGN_DEPTH_CAUTIONS,
                    "title": "basin return levels",
                },
            )
    return JobResult(paths=paths, table=table, cautions=tuple(DESIGN_DEPTH_CAUTIONS))


# ------------------------------------------------------------------ scenario
def run_scenario(
    hist,
    future,
    basins,
    months=(7, 8),
    historical=None,
    future_period=None,
    out_dir="out",
    overwrite: bool = False,
    progress: Progress = None,
    *,
    var=None,
    prefix: str = "",
    obs=None,
    method: str = "none",
    design_periods=(10, 100),
    n_boot: int = 200,
    title: str | None = None,
) -> JobResult:
    """Climate-change signals per basin of a model ensemble (CSV and HTML report).

    ``scenario_basin_signals.csv`` has one row per basin: the change in the seasonal share
    and in the annual normal as the ensemble mean, the lowest and highest member and the
    share of members agreeing on the sign (:func:`analyses.scenario.basin_signals`); for
    single runs, the run's change.  ``scenario_report.html`` shows the same table under
    the scenario cautions, with the inputs (sizes and checksums) and the parameters.
    Daily or hourly runs add ``scenario_design_depths.csv``: the change in the 1-day areal
    design depths of ``design_periods`` (:func:`analyses.scenario.basin_depth_signals`),
    also in the report.  ``obs`` (observation files) with ``method="monthly_ratio"`` or
    ``"quantile_delta"`` compares the observations with the adjusted scenario instead of
    the runs with each other.  The scenario cautions
    (:data:`climwidgets.compute.scenario.SCENARIO_CAUTIONS`) are in every file and the result.
    """
    from .analyses.meta import frame
    from .analyses.run import compute
    from .analyses.scenario import _check_method, basin_depth_signals, basin_signals
    from .compute.gev import _check_periods
    from .compute.scenario import SCENARIO_CAUTIONS
    from .report.scenario_section import write_scenario_report
    from .report.tables import to_csv

    job = "scenario"
    months = _check_months(months, job)
    if historical is not None:
        historical = _check_baseline(historical, job, "historical")
    if future_period is not None:
        future_period = _check_baseline(future_period, job, "future")
    _check_method(method, obs, job)
    design_periods = tuple(
        int(p) if float(p).is_integer() else float(p) for p in _check_periods(design_periods).tolist()
    )
    paths = _plan_outputs(out_dir, SCENARIO_FILES, prefix, overwrite, job)
    say = _Reporter(progress, job)
    ph, pf = _open(hist, var), _open(future, var)
    daily = ph.attrs.get("step") not in (None, "month")  # design depths need daily or hourly runs
    if daily:  # checked as soon as the step is known, before any data are read
        paths.update(_plan_outputs(out_dir, {"depths_csv": SCENARIO_DEPTH_FILE}, prefix, overwrite, job))
    basin_list = load_basins(basins)
    po = _open(obs, var) if obs is not None else None
    lazy = [
        basin_signals(
            ph, pf, basin_list, months=months, historical=historical, future=future_period, obs=po, method=method
        )
    ]
    if daily:
        lazy.append(
            basin_depth_signals(
                ph, pf, basin_list, periods=design_periods, historical=historical, future=future_period, n_boot=n_boot
            )
        )
    with say.dask("basin series of both runs and their signals in one pass"):
        computed = compute(*lazy)
    signals, depths = computed[0], (computed[1] if daily else None)
    ensemble = signals.attrs.get("member_dim", "none") != "none"
    # with members: one row per basin (mean, range, agreement); a single run: its own change
    table = frame(signals) if ensemble else frame(signals, columns=["share_change_1", "normal_change_1"])
    table.attrs.update(
        {
            "months": list(months),
            "historical_period": signals.attrs["historical_period"],
            "future_period": signals.attrs["future_period"],
            "member_dim": signals.attrs["member_dim"],
            "method": method,
        }
    )
    sources = _sources(ph) + _sources(pf) + (_sources(po) if po is not None else [])
    notes = [f"compared: {signals.attrs['comparison']}"]
    parameters = {
        "season": signals.attrs["season"],
        "months": list(months),
        "method": method,
        "historical period": signals.attrs["historical_period"],
        "future period": signals.attrs["future_period"],
        "member dimension": signals.attrs["member_dim"],
    }
    cautions = tuple(signals.attrs["cautions"]) + (
        tuple(c for c in depths.attrs["cautions"] if c not in SCENARIO_CAUTIONS) if daily else ()
    )
    with _staged(paths, overwrite, job) as staged:
        to_csv(
            table,
            staged["csv"],
            provenance={
                "inputs": sources,
                "cautions": SCENARIO_CAUTIONS,
                "notes": notes,
                "title": "climate-change signals per basin",
            },
        )
        if daily:
            columns = (
                [n for n in depths.data_vars if set(depths[n].dims) == {"basin", "return_period"}]
                if ensemble
                else ["historical_depth_mm", "future_depth_mm", "depth_change_1"]
            )
            to_csv(
                frame(depths, index=("basin", "return_period"), columns=columns),
                staged["depths_csv"],
                provenance={"inputs": sources, "cautions": cautions, "title": "change in design depths per basin"},
            )
        say("writing the report")
        write_scenario_report(
            signals,
            staged["report"],
            inputs=sources,
            parameters=parameters,
            depths=depths,
            title=title or "Climate-change signals per basin",
        )
    return JobResult(paths=paths, table=table, cautions=cautions)


# ------------------------------------------------------------------ compare
def _product_names(data) -> dict:
    """{name: path} from a dict, 'NAME=PATH' items, or plain paths (named by file stem)."""
    if isinstance(data, dict):
        items = [(str(k), v) for k, v in data.items()]
    else:
        items = []
        for item in [data] if isinstance(data, (str, os.PathLike)) else list(data):
            text = os.fspath(item)
            name, sep, path = text.partition("=")
            if sep and name and not os.path.exists(text):
                items.append((name, path))
            else:
                items.append((Path(text).stem, text))
    names = [n for n, _ in items]
    if len(items) < 2:
        raise ParameterError(
            f"{len(items)} product(s) given",
            source="compare",
            variable="data",
            expected="at least two precipitation products (the first is the reference)",
            fix="pass two or more files, optionally as NAME=PATH",
        )
    if len(set(names)) != len(names):
        raise ParameterError(
            f"product names repeat: {names}",
            source="compare",
            variable="data",
            expected="one name per product",
            fix="name them as NAME=PATH, e.g. gauge=a.nc radar=b.nc",
        )
    return dict(items)


def run_compare(
    data,
    basins=None,
    months=(7, 8),
    baseline=None,
    out_dir="out",
    overwrite: bool = False,
    progress: Progress = None,
    *,
    period=None,
    grid=None,
    method="conservative",
    var=None,
    kge="2009",
    prefix: str = "",
) -> JobResult:
    """Agreement maps of each product against the first (NetCDF) and a basin table (CSV).

    ``data``: ``{name: path}``, or paths / ``NAME=PATH`` strings; the first product is the
    reference.  Products are brought to common complete years and one grid with
    :func:`cw.align` (``grid``: None = the coarsest, or a product name) and compared with
    :func:`cw.compare`; ``comparison_metrics.nc`` holds ``bias``, ``ratio``, ``rmse``,
    ``corr``, ``anomaly_corr``, ``kge``, ``nse`` and ``n`` over a ``product`` dimension
    (the products other than the reference).  With ``basins``, ``products_basin_table.csv``
    is :func:`cw.products_basin_table` (each product on its own grid, spread rows).
    """
    import dask
    import xarray as xr

    from .analyses.comparison import agreement_maps, aligned_products, products_basin_table
    from .compute.totals import monthly_totals
    from .report.netcdf import to_netcdf
    from .report.tables import to_csv

    job = "compare"
    named = _product_names(data)
    months = _check_months(months, job)
    if baseline is not None:
        baseline = _check_baseline(baseline, job)
    if period is not None:
        period = _check_baseline(period, job, "period")
    if str(kge) not in ("2009", "2012"):
        raise ParameterError(
            f"unknown KGE form {kge!r}",
            source=job,
            variable="kge",
            expected="'2009' (Gupta et al.) or '2012' (Kling et al.)",
            fix="use kge='2009'",
        )
    if grid is not None and grid not in named:
        raise ParameterError(
            f"grid {grid!r} is not one of the products",
            source=job,
            variable="grid",
            expected=" or ".join(repr(n) for n in named),
            fix="name one of the products",
        )
    names = COMPARE_FILES if basins is not None else {"netcdf": COMPARE_FILES["netcdf"]}
    paths = _plan_outputs(out_dir, names, prefix, overwrite, job)
    say = _Reporter(progress, job)
    basin_list = load_basins(basins) if basins is not None else []
    products = {n: _open(p, var) for n, p in named.items()}
    sources = [s for pr in products.values() for s in _sources(pr)]

    # one read per product: monthly totals, then everything from them
    lazy = {n: monthly_totals(pr) for n, pr in products.items()}
    with say.dask(f"monthly totals of {len(products)} products"):
        (monthly,) = dask.compute(lazy)
    aligned = {n: a.rename(n) for n, a in aligned_products(monthly, grid=grid, period=period, method=method).items()}
    ref, others = next(iter(aligned)), list(aligned)[1:]
    say(f"agreement maps against {ref!r}")
    metrics = xr.concat(
        [agreement_maps(aligned, ref, o, kge=kge) for o in others],
        dim=pd.Index(others, name="product"),
        combine_attrs="drop_conflicts",
    )
    metrics["product"].attrs = {"long_name": f"product compared with the reference {ref!r}"}
    metrics.attrs.pop("other", None)  # one value per product: the product coordinate says it
    metrics.attrs.update(
        reference=ref,
        products=list(named),
        period=aligned[ref].attrs.get("period", ""),
        grid=f"grid of {grid or 'the coarsest product'}; {method} regridding where needed",
    )
    with _staged(paths, overwrite, job) as staged:
        to_netcdf(metrics.compute(), staged["netcdf"], title=f"Agreement of precipitation products with {ref}")
        table = None
        if basin_list:
            say("basin table across products")
            table = products_basin_table(monthly, basin_list, months=months, baseline=baseline)
            to_csv(table, staged["csv"], provenance={"inputs": sources, "title": "basin table across products"})
    return JobResult(paths=paths, table=table, cautions=())


# ------------------------------------------------------------------ demo
DEMO_MONTHS = (7, 8)
DEMO_BASELINE = (1991, 2020)


def run_demo_headless(
    out_dir="out",
    progress: Progress = None,
    *,
    directory=None,
    size: str = "full",
    force: bool = False,
    figures: bool = True,
) -> JobResult:
    """Generate the invented demo (if needed) and run :func:`run_summary` on it.

    Writes ``demo_basin_summary.csv``, ``demo_seasonal_share_normals.nc`` and
    ``demo_basin_report.html`` into ``out_dir``: the July–August share and the 1991–2020
    normals of the demo basins from the daily demo file.  These ``demo_*`` files are the
    demo's own and are replaced on every run; other files in the folder are not touched.
    """
    from . import demo

    files = demo.generate(directory, force=force, quiet=progress is None, size=size)
    return run_summary(
        files["daily"],
        files["basins"],
        months=DEMO_MONTHS,
        baseline=DEMO_BASELINE,
        out_dir=out_dir,
        overwrite=True,
        progress=progress,
        prefix="demo_",
        title=f"{demo.ISLAND} demo: basin precipitation summary (invented data)",
        figures=figures,
    )
