"""Make tests/reference/data/distribution_references.json.

    .venv/bin/python tests/reference/generate_distribution_references.py [--workers 2] [--quick]

The values are those of the independent mpmath references defined in
test_studentized_range.py and test_many_to_one.py (imported from there, so that
the tests and this script share one implementation). Points are placed with the
engine (a q or c near a wanted tail probability, rounded to six figures); the
reference is then computed at exactly that point, so the placement does not
enter the stored probabilities. For each point the smaller tail is integrated
directly; the other is one minus it, at 20 digits. Every fifteenth point is also
computed with a rule of twice the nodes on the same panels, and the relative
difference is stored ("check"); the script fails if any exceeds 1e-15.

Exact quantiles are stored for the published table cells that the tests find
printed half a unit or more away from the engine's value, and for a few cells
named in comments of the tests (root of the reference's P(max > c) = alpha by
secant steps in log c, from the engine's value as a starting point).

Runs about three quarters of an hour on two cores; the output is deterministic.
"""

from __future__ import annotations

import argparse
import dataclasses
import importlib.util
import json
import math
import os
import sys
import time
from concurrent.futures import ProcessPoolExecutor
from pathlib import Path

HERE = Path(__file__).resolve().parent
os.environ["FAMILYWISE_MAKING_REFERENCES"] = "1"  # lets the test modules import before the data exist
OUT = HERE / "data" / "distribution_references.json"
INF = math.inf


def _load(name: str, filename: str):
    spec = importlib.util.spec_from_file_location(name, HERE / filename)
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    spec.loader.exec_module(module)
    return module


_MODULES: dict = {}


def modules():
    if not _MODULES:
        _MODULES["sr"] = _load("_familywise_range_reference", "test_studentized_range.py")
        _MODULES["mto"] = _load("_familywise_max_reference", "test_many_to_one.py")
    return _MODULES["sr"], _MODULES["mto"]


def _digits(x) -> str:
    import mpmath as mp

    return mp.nstr(x, 20)


# --------------------------------------------------------------------------
# Tasks
# --------------------------------------------------------------------------

# the sf at the stored points (the nu = infinity tests use more, computed live)
STORED_TARGETS = [1e-12, 1e-6, 1e-3, 0.05, 0.5, 0.95, 1 - 1e-12]
SR_DF = [2.0, 5.0, 10.0, 30.0, 120.0, 1000.0]
SR_EDGE_DF = [1.0, 1e6]
SR_EDGE_K = [3, 10, 100]
SR_EDGE_TARGETS = [1e-12, 1e-3, 0.5, 1 - 1e-6]
SR_DEEP = [(k, nu) for k in (3, 10, 50) for nu in (2.0, 10.0, 120.0)]
MTO_DF = [2.0, 10.0, 30.0, 1000.0]
MTO_DEEP_DF = [5.0, 30.0]
MTO_DEEP = [1e-15, 1e-30, 1e-100]
CHECK_EVERY = 15  # every so many points, also the rule with twice the nodes

# cells whose exact value a comment of the tests states, whatever the engine gives
SR_EXTRA_QUANTILES = [(0.01, 3, 2.0), (0.01, 5, 7.0)]


def sr_tasks(quick: bool) -> list[tuple]:
    sr, _ = modules()
    points = []
    for k in sr.RANGE_K:
        for nu in SR_DF:
            for p in STORED_TARGETS:
                points.append((k, nu, p))
    for k in SR_EDGE_K:
        for nu in SR_EDGE_DF:
            for p in SR_EDGE_TARGETS:
                points.append((k, nu, p))
    for k, nu in SR_DEEP:
        for p in sr.DEEP_TAIL:
            points.append((k, nu, p))
    if quick:
        points = points[::40]
    return [
        ("sr", i, k, nu, sr._place(k, nu, p), "upper" if p <= 0.5 else "lower")
        for i, (k, nu, p) in enumerate(points)
    ]


def sr_quantile_tasks(quick: bool) -> list[tuple]:
    sr, _ = modules()
    cells = {(alpha, k, nu) for alpha, k, nu in SR_EXTRA_QUANTILES}
    for _source, alpha, k, nu, printed in sr._table_cells():
        ours = sr.studentized_range_isf(alpha, k, nu)
        if abs(ours - float(printed)) > 0.499 * sr._unit(printed):
            cells.add((alpha, k, nu))
    cells = sorted(cells)
    if quick:
        cells = cells[:2]
    return [("srq", alpha, k, nu, sr.studentized_range_isf(alpha, k, nu)) for alpha, k, nu in cells]


def mto_tasks(quick: bool) -> list[tuple]:
    _, mto = modules()
    points = []
    for name, alternative in mto.COMBOS:
        for nu in MTO_DF:
            for p in STORED_TARGETS:
                points.append((name, alternative, nu, p))
    for alternative in mto.ALTERNATIVES:
        for nu in MTO_DEEP_DF:
            for p in MTO_DEEP:
                points.append(("unequal5", alternative, nu, p))
    if quick:
        points = points[::40]
    tasks = []
    for i, (name, alternative, nu, p) in enumerate(points):
        c = mto.place(mto.LAMBDA_SETS[name], nu, alternative, p)
        tasks.append(("mto", i, name, alternative, nu, c, "upper" if p <= 0.5 else "lower"))
    return tasks


def mto_quantile_tasks(quick: bool) -> list[tuple]:
    _, mto = modules()
    cells = set()
    for _table, alpha, alternative, p, nu, printed in mto.table_cells():
        ours = mto.many_to_one_isf(alpha, [math.sqrt(0.5)] * p, nu, alternative)
        if abs(ours - float(printed)) > 0.499 * 0.01:
            cells.add((alpha, p, nu, alternative))
    cells = sorted(cells)
    if quick:
        cells = cells[:2]
    return [
        ("mtoq", alpha, p, nu, alternative, mto.many_to_one_isf(alpha, [math.sqrt(0.5)] * p, nu, alternative))
        for alpha, p, nu, alternative in cells
    ]


def run(task: tuple) -> tuple[dict, float]:
    import mpmath as mp

    sr, mto = modules()
    kind = task[0]
    started = time.perf_counter()
    if kind == "sr":
        _, index, k, nu, q, tail = task
        upper = tail == "upper"
        small = sr.range_reference(q, k, nu, upper)
        check = None
        if index % CHECK_EVERY == 0:
            fine = sr.range_reference(q, k, nu, upper, sr.CHECK_RULE)
            with mp.workdps(sr.DPS):
                check = float(abs(fine / small - 1))
        with mp.workdps(sr.DPS):
            other = 1 - small
        sf, cdf = (small, other) if upper else (other, small)
        row = {"k": k, "df": nu, "q": q, "tail": tail, "sf": _digits(sf), "cdf": _digits(cdf), "check": check}
    elif kind == "mto":
        _, index, name, alternative, nu, c, tail = task
        lam = mto.LAMBDA_SETS[name]
        upper = tail == "upper"
        small = mto.max_reference(c, lam, nu, alternative, upper)
        check = None
        if index % CHECK_EVERY == 0:
            fine = mto.max_reference(c, lam, nu, alternative, upper, sr.CHECK_RULE)
            with mp.workdps(sr.DPS):
                check = float(abs(fine / small - 1))
        with mp.workdps(sr.DPS):
            other = 1 - small
        sf, cdf = (small, other) if upper else (other, small)
        row = {
            "set": name,
            "lambdas": lam,
            "alternative": alternative,
            "df": nu,
            "c": c,
            "tail": tail,
            "sf": _digits(sf),
            "cdf": _digits(cdf),
            "check": check,
        }
    elif kind == "srq":
        _, alpha, k, nu, start = task
        row = {"alpha": alpha, "k": k, "df": nu, "q": repr(sr.range_quantile_reference(alpha, k, nu, start))}
    else:
        _, alpha, p, nu, alternative, start = task
        lam = [math.sqrt(0.5)] * p
        c = mto.max_quantile_reference(alpha, lam, nu, alternative, start)
        row = {"alpha": alpha, "p": p, "df": nu, "alternative": alternative, "c": repr(c)}
    return row, time.perf_counter() - started


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--workers", type=int, default=2)
    parser.add_argument("--quick", action="store_true", help="a few points only, to another file")
    parser.add_argument("--out", type=Path, default=OUT)
    args = parser.parse_args()
    out = args.out if not args.quick else args.out.with_name("distribution_references.quick.json")

    import mpmath as mp
    import scipy

    groups = {
        "studentized_range": sr_tasks(args.quick),
        "studentized_range_quantiles": sr_quantile_tasks(args.quick),
        "many_to_one": mto_tasks(args.quick),
        "many_to_one_quantiles": mto_quantile_tasks(args.quick),
    }
    flat = [(name, task) for name, tasks in groups.items() for task in tasks]
    print(f"{len(flat)} reference values on {args.workers} workers", file=sys.stderr)
    started = time.perf_counter()
    results: dict[str, list] = {name: [] for name in groups}
    with ProcessPoolExecutor(max_workers=args.workers) as pool:
        for done, ((name, _task), (row, seconds)) in enumerate(
            zip(flat, pool.map(run, [t for _, t in flat]), strict=True)
        ):
            results[name].append(row)
            elapsed = time.perf_counter() - started
            print(
                f"[{done + 1}/{len(flat)} {elapsed:6.0f} s] {name} ({seconds:.1f} s) {row}", file=sys.stderr
            )
    checks = [
        row["check"] for name in ("studentized_range", "many_to_one") for row in results[name] if row["check"]
    ]
    sr, _ = modules()
    document = {
        "about": {
            "made_by": "tests/reference/generate_distribution_references.py",
            "method": (
                "mpmath composite Gauss-Legendre at 20 digits of the Hartley (1942) / Copenhaver and Holland"
                " (1988) studentized range and Dunnett (1955) many-to-one integrals, mixed over the chi"
                " distribution; each end truncated below 1e-25 of the result by closed-form bounds"
            ),
            "digits": sr.DPS,
            "rule": dataclasses.asdict(sr.RULE),
            "check_rule": dataclasses.asdict(sr.CHECK_RULE),
            "largest_check_difference": max(checks) if checks else None,
            "mpmath": mp.__version__,
            "scipy": scipy.__version__,
            "fields": (
                "tail: the tail integrated directly (the other is one minus it); check: relative"
                " difference from a rule with twice the nodes, every fifteenth point"
            ),
        },
        **results,
    }
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(json.dumps(document, indent=1) + "\n")
    print(f"wrote {out} in {time.perf_counter() - started:.0f} s", file=sys.stderr)
    if checks and max(checks) > 1e-15:
        raise SystemExit(f"the two quadrature rules disagree by {max(checks):.2e}: do not use {out}")


if __name__ == "__main__":
    main()
