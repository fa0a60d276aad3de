"""The ``climwidgets`` command: the notebook's jobs without a browser.

A thin argparse layer over :mod:`climwidgets.jobs` (the headless demo runs the same job
functions).  Written paths go to stdout, one per line; progress goes to stderr unless
``--quiet``; cautions for design depths are always printed to stderr.

Exit codes: 0 ok, 2 bad input (bad arguments, missing or unreadable files, existing
outputs, an output folder or disk that refuses the files: the message is printed on one
line), 1 internal error.  A mistyped option value or command is answered with the nearest
valid word ("did you mean ...?").
"""

from __future__ import annotations

import argparse
import difflib
import errno
import sys
from pathlib import Path

from .errors import InputError, ParameterError

EXIT_OK, EXIT_INTERNAL, EXIT_INPUT = 0, 1, 2

_EXAMPLES = """\
examples:
  climwidgets demo --headless --out out
  climwidgets info demo_grids/generated/pr_daily.nc
  climwidgets summary --data pr_daily.nc --basins basins.geojson --months 7,8 --baseline 1991-2020 --out out
  climwidgets extremes --data pr_daily.nc --basins basins.geojson --duration 1 --periods 2,10,100 --out out
  climwidgets compare --data gauge=pr_monthly.nc coarse=pr_coarse.nc --basins basins.geojson --out out

exit codes: 0 ok, 2 bad input (the message says what and how to fix it), 1 internal error
"""


def _stderr(text: str):
    print(text, file=sys.stderr, flush=True)


# ------------------------------------------------------------------ argument values
def _months(text: str) -> tuple[int, ...]:
    fix = "give month numbers 1-12 separated by commas, e.g. --months 7,8 or --months 11,12,1,2,3"
    try:
        months = tuple(int(m) for m in text.split(",") if m.strip())
    except ValueError:
        raise ParameterError(
            f"--months {text!r} is not a list of month numbers", expected="month numbers 1-12", fix=fix
        ) from None
    bad = [m for m in months if not 1 <= m <= 12]
    if not months or bad:
        what = f"{bad[0]} is not a month number" if bad else "no month given"
        raise ParameterError(f"--months {text!r}: {what}", expected="month numbers 1-12", fix=fix)
    return months


def _years(text: str, option: str = "--baseline") -> tuple[int, int]:
    fix = f"give two years joined by a hyphen, first year first, e.g. {option} 1991-2020"
    try:
        a, b = (int(x) for x in text.split("-"))
    except ValueError:
        raise ParameterError(f"{option} {text!r} is not a year range", expected="FIRST-LAST", fix=fix) from None
    if a > b:
        raise ParameterError(
            f"{option} {text!r} ends before it starts", expected="FIRST-LAST with FIRST <= LAST", fix=fix
        )
    return a, b


def _numbers(text: str, option: str, kind=float) -> tuple:
    try:
        values = tuple(kind(v) for v in text.split(",") if v.strip())
    except ValueError:
        values = ()
    if not values:
        raise ParameterError(
            f"{option} {text!r} is not a list of numbers",
            expected="numbers separated by commas",
            fix=f"e.g. {option} 2,10,25,50,100",
        )
    return values


# ------------------------------------------------------------------ commands
def _progress(args):
    return None if args.quiet else _stderr


def _print_result(result, cautions_title=None):
    for path in result.paths.values():
        print(path)
    if result.cautions and cautions_title:
        _stderr(cautions_title)
        for c in result.cautions:
            _stderr(f"  - {c}")


def _cmd_info(args):
    from .io.info import describe

    print(describe(args.path, var=args.var, scan=args.scan))
    return EXIT_OK


def _cmd_summary(args):
    from .jobs import run_summary

    result = run_summary(
        args.data,
        args.basins,
        months=_months(args.months),
        baseline=_years(args.baseline),
        out_dir=args.out,
        overwrite=args.overwrite,
        progress=_progress(args),
        var=args.var,
        year_start=args.year_start,
        title=args.title,
        what_if_percent=args.what_if,
        what_if_months=_months(args.what_if_months) if args.what_if_months else None,
        units=args.units,
    )
    _print_result(result)
    return EXIT_OK


def _cmd_extremes(args):
    from .jobs import run_extremes

    periods = _numbers(args.periods, "--periods")
    result = run_extremes(
        args.data,
        args.basins,
        duration_days=args.duration,
        periods=periods,
        ci=args.ci,
        n_boot=args.n_boot,
        out_dir=args.out,
        overwrite=args.overwrite,
        progress=_progress(args),
        var=args.var,
        year_start=args.year_start,
        duration_hours=args.hours,
        seed=args.seed,
        units=args.units,
    )
    _print_result(result, "Cautions for these design-storm depths:")
    return EXIT_OK


def _cmd_compare(args):
    from .jobs import run_compare

    result = run_compare(
        args.data,
        args.basins,
        months=_months(args.months),
        baseline=None if args.baseline is None else _years(args.baseline),
        out_dir=args.out,
        overwrite=args.overwrite,
        progress=_progress(args),
        period=None if args.period is None else _years(args.period, "--period"),
        grid=args.grid,
        method=args.method,
        var=args.var,
        kge=args.kge,
    )
    _print_result(result)
    return EXIT_OK


def _cmd_scenario(args):
    from .jobs import run_scenario

    result = run_scenario(
        args.hist,
        args.future,
        args.basins,
        months=_months(args.months),
        historical=None if args.historical is None else _years(args.historical, "--historical"),
        future_period=None if args.future_period is None else _years(args.future_period, "--future-period"),
        out_dir=args.out,
        overwrite=args.overwrite,
        progress=_progress(args),
        var=args.var,
    )
    _print_result(result, "Cautions for these climate-change signals:")
    return EXIT_OK


def _cmd_demo(args):
    from . import demo

    say = _progress(args)
    if args.headless:
        from .jobs import run_demo_headless

        result = run_demo_headless(args.out, progress=say, directory=args.dir, size=args.size, force=args.force)
        _print_result(result)
        return EXIT_OK
    paths = demo.generate(args.dir, force=args.force, quiet=args.quiet, size=args.size)
    for path in paths.values():
        print(path)
    if args.serve:
        import subprocess

        notebook = Path(__file__).resolve().parent.parent / "notebooks" / "tour.ipynb"
        if not notebook.is_file():
            raise ParameterError(
                "the tour notebook is not here (installed without the source checkout?)",
                source=notebook,
                fix="run from a source checkout: make demo",
            )
        from .page import voila_command

        _stderr(f"Serving the tour at http://127.0.0.1:{args.port}/ (Ctrl-C to stop)")
        argv, env = voila_command(notebook, args.port)
        return subprocess.call([*argv], env=env)  # a list of words, never a shell string
    return EXIT_OK


# ------------------------------------------------------------------ parser
def nearest_word(word: str, choices) -> str | None:
    """The valid word closest to a mistyped ``word`` (difflib's ratio of at least 0.6), or None.

    Parameters
    ----------
    word : str
        What was typed.
    choices : iterable of str
        The valid words.

    Returns
    -------
    str or None

    Examples
    --------
    >>> nearest_word("sumary", ["demo", "info", "summary", "extremes"])
    'summary'
    >>> nearest_word("dayly", ["daily", "monthly", "hourly"])
    'daily'
    >>> nearest_word("zzz", ["full", "test"]) is None
    True
    """
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    if not close:  # a typo in a longer word: compare without case
        lowered = {str(c).lower(): str(c) for c in choices}
        close = [lowered[c] for c in difflib.get_close_matches(str(word).lower(), list(lowered), n=1, cutoff=0.6)]
    return close[0] if close else None


class _Parser(argparse.ArgumentParser):
    """argparse with plain messages: the nearest valid word for a typo, the expected kind
    of number for a value that is not one."""

    def _check_value(self, action, value):
        if action.choices is not None and value not in action.choices:
            valid = [str(c) for c in action.choices]
            near = nearest_word(value, valid)
            hint = f"did you mean {near!r}? " if near else ""
            raise argparse.ArgumentError(action, f"invalid choice {value!r}; {hint}expected one of: {', '.join(valid)}")

    def _get_value(self, action, arg_string):
        try:
            return super()._get_value(action, arg_string)
        except argparse.ArgumentError:
            kind = {int: "a whole number", float: "a number"}.get(action.type)
            if kind is None:
                raise
            what = f" ({action.help})" if action.help else ""
            raise argparse.ArgumentError(action, f"{arg_string!r} is not {kind}; expected {kind}{what}") from None


def build_parser() -> argparse.ArgumentParser:
    fmt = argparse.RawDescriptionHelpFormatter
    p = _Parser(
        prog="climwidgets",
        formatter_class=fmt,
        epilog=_EXAMPLES,
        description="Gridded precipitation climatology from the command line: basin summaries, "
        "design-storm depths and product comparisons, written as CSV, NetCDF and HTML.",
    )
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    from ._version import __version__

    p.add_argument("--version", action="version", version=f"climwidgets {__version__}")
    # the same flag after the command name; SUPPRESS keeps a flag given before it
    common = _Parser(add_help=False)
    common.add_argument(
        "--quiet", action="store_true", default=argparse.SUPPRESS, help="no progress messages on stderr"
    )
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def data_args(q, basins_required):
        q.add_argument(
            "--data",
            nargs="+",
            required=True,
            metavar="PATH",
            help="precipitation NetCDF file(s), glob pattern or Zarr store; several files are "
            "parts of one record, joined along time",
        )
        q.add_argument(
            "--basins",
            required=basins_required,
            default=None,
            metavar="FILE",
            help="basin outlines: GeoJSON (.geojson, .json) or shapefile (.shp)",
        )
        q.add_argument("--var", default=None, help="variable name (default: found by standard_name or units)")

    def out_args(q):
        q.add_argument("--out", default="out", metavar="DIR", help="output folder, created if absent (default: out)")
        q.add_argument("--overwrite", action="store_true", help="replace existing outputs (default: refuse)")

    d = sub.add_parser(
        "demo",
        parents=[common],
        help="generate the invented demo data; optionally summarize it or serve the tour",
        description="Generate the invented demo grids (deterministic; skipped when present). "
        "--headless then writes the demo basin summary, maps and report to --out "
        "(files demo_*, replaced on every run) through the same job as "
        "'climwidgets summary'; --serve serves the tour notebook.",
    )
    d.add_argument("--force", action="store_true", help="regenerate the demo files even if they exist")
    d.add_argument("--dir", default=None, help="demo data folder (default: demo_grids/generated or a user cache)")
    d.add_argument("--size", default="full", choices=("full", "test"), help="demo grid size (default: full)")
    d.add_argument("--headless", action="store_true", help="write the demo basin summary and report to --out")
    d.add_argument("--out", default="out", metavar="DIR", help="output folder for --headless (default: out)")
    d.add_argument("--serve", action="store_true", help="serve the tour notebook with Voila")
    d.add_argument("--port", type=int, default=8866, help="port for --serve (default: 8866)")
    d.set_defaults(func=_cmd_demo)

    i = sub.add_parser(
        "info",
        parents=[common],
        help="what the loader sees in a file: variable, units, calendar, step, grid, chunks",
        description="Describe a precipitation source as cw.open_precip sees it: variable, units "
        "and conversion to mm per step, calendar, step, period, grid, chunks and "
        "missing data (--scan reads the data to count it).",
    )
    i.add_argument("path", nargs="+", help="NetCDF file(s), a glob pattern, or a Zarr store")
    i.add_argument("--var", default=None, help="variable name (default: found by standard_name or units)")
    i.add_argument("--scan", action="store_true", help="also read the data to count missing values")
    i.set_defaults(func=_cmd_info)

    s = sub.add_parser(
        "summary",
        parents=[common],
        help="basin summary table (CSV), seasonal share and normals (NetCDF), HTML report",
        description="Per basin: area, mean annual precipitation, seasonal share, annual normal, "
        "volumes and the latest year against the normal. Writes basin_summary.csv, "
        "seasonal_share_normals.nc and basin_report.html into --out.",
    )
    data_args(s, True)
    s.add_argument("--months", default="7,8", help="the season's months, e.g. 7,8 or 11,12,1,2,3 (default: 7,8)")
    s.add_argument("--baseline", default="1991-2020", help="normal period FIRST-LAST (default: 1991-2020)")
    s.add_argument("--year-start", type=int, default=1, help="first month of the 12-month year (10 = water year)")
    s.add_argument("--title", default=None, help="report title")
    s.add_argument(
        "--what-if",
        type=float,
        default=None,
        metavar="PERCENT",
        help="add the seasonal what-if to the report: the season's precipitation changed by PERCENT",
    )
    s.add_argument("--what-if-months", default=None, help="the what-if's season (default: --months)")
    s.add_argument(
        "--units",
        default="si",
        type=str.lower,
        choices=("si", "us"),
        help="units of the CSV and report: si (mm, million m³, km²; default) or us (in, acre-ft, mi²)",
    )
    out_args(s)
    s.set_defaults(func=_cmd_summary)

    e = sub.add_parser(
        "extremes",
        parents=[common],
        help="return-level maps (NetCDF) and basin design depths with intervals (CSV)",
        description="GEV return levels (L-moments, parametric-bootstrap intervals) of annual "
        "maximum n-day precipitation per cell (return_levels.nc) and per basin "
        "(basin_return_levels.csv, areal depths). Planning-level figures: the "
        "cautions are printed and written into both files.",
    )
    data_args(e, False)
    e.add_argument("--duration", type=int, default=1, help="duration in days: 1, 2, 3, 5, 7 or 10 (default: 1)")
    e.add_argument("--hours", type=int, default=None, help="duration in hours for hourly data (1, 3, 6, 12, 24)")
    e.add_argument("--periods", default="2,10,25,50,100", help="return periods in years (default: 2,10,25,50,100)")
    e.add_argument("--ci", type=float, default=0.9, help="confidence level of the intervals (default: 0.9)")
    e.add_argument("--n-boot", type=int, default=1000, help="bootstrap samples (default: 1000)")
    e.add_argument("--seed", type=int, default=0, help="random seed of the bootstrap (default: 0)")
    e.add_argument("--year-start", type=int, default=1, help="first month of the year (10 = water year)")
    e.add_argument(
        "--units",
        default="si",
        type=str.lower,
        choices=("si", "us"),
        help="units of the basin depths in the CSV: si (mm; default) or us (in)",
    )
    out_args(e)
    e.set_defaults(func=_cmd_extremes)

    c = sub.add_parser(
        "compare",
        parents=[common],
        help="agreement maps between products (NetCDF) and a basin table across products (CSV)",
        description="The first --data product is the reference; name products as NAME=PATH "
        "(default: file name). Products are compared as monthly totals over their "
        "common complete years on one grid (the coarsest unless --grid). Writes "
        "comparison_metrics.nc and, with --basins, products_basin_table.csv.",
    )
    c.add_argument(
        "--data",
        nargs="+",
        required=True,
        metavar="[NAME=]PATH",
        help="two or more precipitation products, the reference first",
    )
    c.add_argument("--basins", default=None, metavar="FILE", help="basin outlines (GeoJSON or shapefile)")
    c.add_argument("--var", default=None, help="variable name (default: found by standard_name or units)")
    c.add_argument("--months", default="7,8", help="season for the basin table (default: 7,8)")
    c.add_argument("--baseline", default=None, help="normal period FIRST-LAST (default: the common period)")
    c.add_argument("--period", default=None, help="compare only FIRST-LAST (default: all common complete years)")
    c.add_argument("--grid", default=None, metavar="NAME", help="product whose grid is used (default: coarsest)")
    c.add_argument(
        "--method",
        default="conservative",
        choices=("conservative", "bilinear"),
        help="regridding method (default: conservative)",
    )
    c.add_argument("--kge", default="2009", choices=("2009", "2012"), help="Kling-Gupta efficiency form")
    out_args(c)
    c.set_defaults(func=_cmd_compare)

    sc = sub.add_parser(
        "scenario",
        parents=[common],
        help="climate-change signals per basin of a model ensemble (CSV and HTML report)",
        description="Per basin: change in the seasonal share (future − historical) and in the "
        "annual normal (future / historical − 1) of a historical and a future run "
        "of the same members, as the ensemble mean, lowest and highest member and "
        "the share of members agreeing. Writes scenario_basin_signals.csv and "
        "scenario_report.html into --out (daily runs add "
        "scenario_design_depths.csv). The scenario cautions are printed and "
        "written into every file.",
    )
    sc.add_argument("--hist", nargs="+", required=True, metavar="PATH", help="historical run file(s)")
    sc.add_argument("--future", nargs="+", required=True, metavar="PATH", help="future run file(s)")
    sc.add_argument("--basins", required=True, metavar="FILE", help="basin outlines (GeoJSON or shapefile)")
    sc.add_argument("--var", default=None, help="variable name (default: found by standard_name or units)")
    sc.add_argument("--months", default="7,8", help="the season's months (default: 7,8)")
    sc.add_argument("--historical", default=None, help="historical period FIRST-LAST (default: all complete years)")
    sc.add_argument("--future-period", default=None, help="future period FIRST-LAST (default: all complete years)")
    out_args(sc)
    sc.set_defaults(func=_cmd_scenario)
    return p


def _one_line(exc) -> str:
    return " ".join(str(exc).split())


_OS_FIXES = {
    errno.ENOENT: "check the path",
    errno.EACCES: "check the permissions of the file or folder, or use another one",
    errno.EPERM: "check the permissions of the file or folder, or use another one",
    errno.ENOSPC: "free some space on that disk, or write to another folder (--out)",
    errno.EROFS: "write to a folder on a writable disk (--out)",
    errno.EISDIR: "give a file, not a folder",
    errno.ENOTDIR: "check the path: a part of it is a file, not a folder",
}


def _os_error_line(exc: OSError) -> str:
    """An OSError as a sentence (what, where, how to fix), never a bare "[Errno n] ..."."""
    where = exc.filename if exc.filename is not None else None
    text = str(exc.strerror or exc)
    if where is not None and str(where) in text:
        return _one_line(exc)  # already composed by the package (names the file, says what was lost)
    fix = _OS_FIXES.get(exc.errno or 0, "check the path, the permissions and the free space")
    head = f"{where}: " if where is not None else ""
    return _one_line(f"{head}{text.rstrip('.')}. Fix: {fix}.")


def main(argv=None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse printed usage (exit 2) or help (exit 0)
        return exc.code if isinstance(exc.code, int) else EXIT_INPUT
    try:
        return args.func(args)
    except InputError as exc:
        _stderr(f"climwidgets {args.command}: {_one_line(exc)}")
        return EXIT_INPUT
    except OSError as exc:
        if exc.errno is None:
            raise
        _stderr(f"climwidgets {args.command}: {_os_error_line(exc)}")
        return EXIT_INPUT
    except KeyboardInterrupt:
        _stderr("climwidgets: interrupted")
        return EXIT_INTERNAL
    except Exception as exc:  # an internal error: say so plainly, keep the traceback for reports
        import traceback

        traceback.print_exc()
        _stderr(
            f"climwidgets {args.command}: internal error ({type(exc).__name__}: {_one_line(exc)}); "
            "please report it with the traceback above"
        )
        return EXIT_INTERNAL


if __name__ == "__main__":
    sys.exit(main())
