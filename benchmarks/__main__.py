"""Run every ``benchmarks/bench_*.py`` module and print one table of figures.

Usage: ``python -m benchmarks [--only TEXT] [--out FILE.csv] [--list]``.
Writes ``benchmarks/results.csv`` by default (replaced on every run: it is a
measurement artefact, not a product). Exit status 0 when every module ran,
1 when one raised (its error is printed and the others still run), 2 on a bad
argument. Targets not met are reported in the table, not as a failure.
"""

import argparse
import datetime as dt
import importlib
import math
import os
import pkgutil
import platform
import sys
import traceback
from pathlib import Path

import benchmarks

COLUMNS = ["module", "name", "value", "unit", "target", "met"]


def discover():
    """Names of the bench modules, sorted: ``benchmarks.bench_*``."""
    return sorted(
        f"benchmarks.{m.name}"
        for m in pkgutil.iter_modules(benchmarks.__path__)
        if m.name.startswith("bench_")
    )


def _check_rows(modname, rows):
    if not isinstance(rows, list):
        raise TypeError(f"{modname}.run() returned {type(rows).__name__}; expected a list of dicts")
    for r in rows:
        missing = [k for k in ("name", "value", "unit", "target", "met") if k not in r]
        if missing:
            raise TypeError(f"{modname}.run(): figure {r!r} lacks {', '.join(missing)}")
    return rows


def _normalise(r):
    """One figure with plain types: value float (NaN when missing), target text, met bool/None."""
    value = r["value"]
    try:
        value = math.nan if value is None else float(value)
    except (TypeError, ValueError):
        value = math.nan
    met = r["met"]
    return {
        "name": str(r["name"]),
        "value": value,
        "unit": "" if r["unit"] is None else str(r["unit"]),
        "target": "" if r["target"] is None else str(r["target"]),
        "met": None if met is None else bool(met),
    }


def run_all(only=None, stream=sys.stdout):
    """Run the bench modules; return (rows, failures)."""
    rows, failures = [], []
    for modname in discover():
        short = modname.split(".", 1)[1]
        if only and only not in short:
            continue
        print(f"running {short} ...", file=stream, flush=True)
        try:
            mod = importlib.import_module(modname)
            for r in _check_rows(modname, mod.run()):
                rows.append({"module": short, **_normalise(r)})
        except Exception as exc:  # one broken bench must not hide the others
            failures.append(short)
            print(f"error: {short}: {type(exc).__name__}: {exc}", file=sys.stderr)
            traceback.print_exc(limit=3, file=sys.stderr)
    return rows, failures


def _fmt_value(v):
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return "n/a"
    a = abs(v)
    if a != 0 and (a >= 1e5 or a < 1e-3):
        return f"{v:.3g}"
    return f"{v:.4g}"


def _fmt_met(m):
    return "-" if m is None else ("yes" if m else "NO")


def format_table(rows):
    """The figures as an aligned text table."""
    head = ["module", "figure", "value", "unit", "target", "met?"]
    body = [
        [r["module"], r["name"], _fmt_value(r["value"]), r["unit"], r["target"], _fmt_met(r["met"])]
        for r in rows
    ]
    widths = [max(len(str(x)) for x in col) for col in zip(head, *body, strict=True)]
    lines = ["  ".join(str(x).ljust(w) for x, w in zip(head, widths, strict=True))]
    lines.append("  ".join("-" * w for w in widths))
    for b in body:
        cells = [str(x).ljust(w) for x, w in zip(b, widths, strict=True)]
        cells[2] = b[2].rjust(widths[2])
        lines.append("  ".join(cells).rstrip())
    return "\n".join(lines)


def machine_line():
    """One line that says where the figures were measured."""
    try:
        load = "load %.2f" % os.getloadavg()[0]
    except OSError:
        load = "load n/a"
    import numpy

    return (
        f"{platform.python_implementation()} {platform.python_version()}, "
        f"numpy {numpy.__version__}, {os.cpu_count()} CPUs, {load}, "
        f"{dt.datetime.now(dt.UTC):%Y-%m-%dT%H:%M:%SZ}"
    )


def main(argv=None):
    parser = argparse.ArgumentParser(
        prog="python -m benchmarks", description="Speed and accuracy figures for frontshift."
    )
    parser.add_argument(
        "--only", metavar="TEXT", help="run only bench modules whose name contains TEXT"
    )
    parser.add_argument(
        "--out",
        metavar="FILE.csv",
        default=str(Path(benchmarks.__file__).with_name("results.csv")),
        help="where to write the figures (default: benchmarks/results.csv, replaced each run)",
    )
    parser.add_argument("--list", action="store_true", help="list the bench modules and stop")
    args = parser.parse_args(argv)

    if args.list:
        for m in discover():
            print(m.split(".", 1)[1])
        return 0
    if not args.out.lower().endswith(".csv"):
        print(f"error: --out {args.out}: expected a .csv file name", file=sys.stderr)
        return 2

    rows, failures = run_all(args.only)
    if not rows and not failures:
        print(f"error: no bench module matches --only {args.only!r}", file=sys.stderr)
        return 2
    print()
    print(machine_line())
    print(format_table(rows))

    import pandas as pd

    from kit.errors import FrontshiftError
    from kit.products.files import write_csv

    frame = pd.DataFrame(rows, columns=COLUMNS)
    frame["measured"] = machine_line()
    try:
        path = write_csv(args.out, frame, overwrite=True)
    except FrontshiftError as exc:
        print(f"error: {exc}", file=sys.stderr)
        return 2
    print(f"\nfigures written to {path}")
    if failures:
        print(f"error: bench modules that failed: {', '.join(failures)}", file=sys.stderr)
        return 1
    return 0


if __name__ == "__main__":
    sys.exit(main())
