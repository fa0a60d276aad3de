"""The ``climwidgets`` command: the notebook's jobs without a browser.

Exit codes: 0 ok, 2 bad input (the InputError message is printed), 1 internal error.
Progress goes to stderr; ``--quiet`` silences it.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from .errors import InputError, ParameterError


class _Progress:
    def __init__(self, quiet: bool):
        self.quiet = quiet

    def __call__(self, text: str):
        if not self.quiet:
            print(text, file=sys.stderr, flush=True)


def _months(text: str) -> tuple[int, ...]:
    try:
        months = tuple(int(m) for m in text.split(",") if m.strip())
    except ValueError:
        raise ParameterError(f"--months '{text}' is not a list of month numbers", expected="e.g. 7,8 or 11,12,1,2,3",
                             fix="give month numbers 1-12 separated by commas") from None
    return months


def _years(text: str) -> tuple[int, int]:
    try:
        a, b = (int(x) for x in text.split("-"))
    except ValueError:
        raise ParameterError(f"--baseline '{text}' is not a year range", expected="FIRST-LAST, e.g. 1991-2020",
                             fix="give two years joined by a hyphen") from None
    return a, b


def _cmd_info(args, say):
    from .io.info import describe

    print(describe(args.path, var=args.var, scan=args.scan))
    return 0


def _cmd_demo(args, say):
    from . import demo

    paths = demo.generate(force=args.force, quiet=args.quiet)
    for key, path in paths.items():
        say(f"{key}: {path}")
    if args.headless:
        out = demo.run_headless(Path(args.out), progress=say)
        for path in out:
            print(path)
        return 0
    if args.serve:
        import subprocess

        notebook = Path(__file__).resolve().parent.parent / "notebooks" / "tour.ipynb"
        say(f"Serving the tour at http://localhost:{args.port}/")
        return subprocess.call([sys.executable, "-m", "voila", str(notebook), f"--port={args.port}",
                                "--no-browser", "--Voila.ip=127.0.0.1"])
    return 0


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="climwidgets", description="Gridded precipitation climatology from the command line.")
    p.add_argument("--quiet", action="store_true", help="no progress messages on stderr")
    sub = p.add_subparsers(dest="command", required=True)

    d = sub.add_parser("demo", help="generate the invented demo data; optionally summarize it or serve the tour")
    d.add_argument("--force", action="store_true", help="regenerate even if the files exist")
    d.add_argument("--headless", action="store_true", help="write the demo basin summary and report to --out and exit")
    d.add_argument("--out", default="out", help="output folder for --headless (default: out)")
    d.add_argument("--serve", action="store_true", help="serve the tour notebook with Voila")
    d.add_argument("--port", type=int, default=8866)
    d.set_defaults(func=_cmd_demo)

    i = sub.add_parser("info", help="what the loader sees in a file: variable, units, calendar, step, grid, chunks")
    i.add_argument("path", nargs="+", help="NetCDF file(s), a glob pattern, or a Zarr store")
    i.add_argument("--var", default=None, help="variable name (default: found by standard_name or units)")
    i.add_argument("--scan", action="store_true", help="also read the data to count missing values")
    i.set_defaults(func=_cmd_info)
    return p


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    say = _Progress(args.quiet)
    try:
        return args.func(args, say)
    except InputError as exc:
        print(f"climwidgets: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("climwidgets: interrupted", file=sys.stderr)
        return 1
    except Exception as exc:  # an internal error: say so plainly, keep the traceback for reports
        import traceback

        traceback.print_exc()
        print(f"climwidgets: internal error ({type(exc).__name__}: {exc}); please report it", file=sys.stderr)
        return 1


if __name__ == "__main__":
    sys.exit(main())
