"""Run the registered benchmarks: ``python -m tests.benchmarks [--only NAME] [--quick]``.

A benchmark is a module of this package with a function ``run(quick: bool) -> bool``
that prints its own report and returns whether every target was met (``--strict``
turns a miss into exit status 1). To add one,
write the module (no ``test_`` prefix, so that pytest never collects it as a timed
test) and list it in BENCHMARKS.
"""

from __future__ import annotations

import argparse
import importlib
import sys

BENCHMARKS = [
    "tests.benchmarks.distributions",
    "tests.benchmarks.families",
    "tests.benchmarks.ingestion",
    "tests.benchmarks.http",
]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m tests.benchmarks", description=__doc__.splitlines()[0])
    parser.add_argument("--only", action="append", metavar="NAME", help="run only this module (short name)")
    parser.add_argument("--quick", action="store_true", help="fewer repetitions (a smoke run)")
    parser.add_argument("--strict", action="store_true", help="exit 1 when a steady-state target is missed")
    args = parser.parse_args(argv)
    chosen = [m for m in BENCHMARKS if not args.only or m.rsplit(".", 1)[-1] in args.only]
    if not chosen:
        parser.error(f"no benchmark named {args.only}; known: {[m.rsplit('.', 1)[-1] for m in BENCHMARKS]}")
    all_met = True
    for name in chosen:
        module = importlib.import_module(name)
        all_met &= bool(module.run(quick=args.quick))
    return 1 if args.strict and not all_met else 0


if __name__ == "__main__":
    sys.exit(main())
