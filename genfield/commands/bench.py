"""Run the benchmark suite and print its figures as a table (optionally JSON)."""

from __future__ import annotations

import argparse


def add_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument("--quick", action="store_true", help="smaller sizes and fewer repeats")
    p.add_argument("--json", metavar="FILE", help="also write the figures as JSON")
    p.add_argument("--case", action="append", metavar="NAME",
                   help="run only this case (repeatable); default all")
    p.add_argument("--list", action="store_true", help="list the cases and exit")


def run(args: argparse.Namespace) -> int:
    import json
    import sys

    from genfield import bench

    cases = bench.all_cases()
    if args.list:
        for c in cases.values():
            print(f"{c.name:24s} {c.description}")
        return 0
    report = bench.run_cases(args.case, quick=args.quick, progress=lambda m: print(m, file=sys.stderr))
    print(bench.format_table(report))
    if args.json:
        with open(args.json, "w", encoding="utf-8") as f:
            json.dump(report, f, indent=2)
        print(f"wrote {args.json}", file=sys.stderr)
    return 0
