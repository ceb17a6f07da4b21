"""Validation against the NIST StRD one-way ANOVA datasets.

The eleven certified datasets of the NIST Statistical Reference Datasets
(https://www.itl.nist.gov/div898/strd/anova/anova.html; certified values to
15 significant digits) ship inside scipy's wheel. Each is posted through the
same path a request takes — JSON text with the numbers exactly as the file
writes them, parsed by the service's decoder, validated by the request
model, ingested exactly — and every certified value is compared by its log
relative error (LRE, the number of correct significant digits; Simon and
Lesage 1989; McCullough 1999).

``familywise validate`` prints the resulting report for a lab's software
validation file.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import scipy

from familywise import __version__

DATASETS = (
    "SiRstv", "SmLs01", "SmLs02", "SmLs03", "AtmWtAg", "SmLs04", "SmLs05", "SmLs06",
    "SmLs07", "SmLs08", "SmLs09",
)
QUANTITIES = ("f", "ss_between", "ss_within", "ms_between", "ms_within", "r_squared", "residual_sd")
REQUIRED_DIGITS = 12.0
CERTIFIED_DIGITS = 15.0

_FLOAT = r"[-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?"


@dataclass(frozen=True)
class NistDataset:
    name: str
    difficulty: str
    certified: dict[str, float]
    groups: dict[str, list[str]]  # treatment -> values as written in the file

    def request_json(self) -> str:
        groups = ",".join(
            f'{{"label":"treatment {t}","values":[{",".join(values)}]}}'
            for t, values in self.groups.items()
        )
        return f'{{"groups":[{groups}],"alpha":0.05}}'


@dataclass(frozen=True)
class DatasetCheck:
    name: str
    difficulty: str
    certified: dict[str, float]
    computed: dict[str, float]
    digits: dict[str, float]

    @property
    def worst_digits(self) -> float:
        return min(self.digits.values())

    @property
    def passed(self) -> bool:
        return self.worst_digits >= REQUIRED_DIGITS


def nist_directory() -> Path:
    return Path(scipy.__file__).parent / "stats" / "tests" / "data" / "nist_anova"


def load(name: str) -> NistDataset:
    text = (nist_directory() / f"{name}.dat").read_text()
    lines = text.splitlines()
    difficulty = next(
        m.group(1) for line in lines if (m := re.search(r"(Lower|Average|Higher) Level of Difficulty", line))
    )
    between = next(line for line in lines if line.startswith("Between "))
    within = next(line for line in lines if line.startswith("Within "))
    b = re.findall(_FLOAT, between.split(None, 2)[2])
    w = re.findall(_FLOAT, within.split(None, 2)[2])
    r2 = next(re.findall(_FLOAT, line)[-1] for line in lines if "Certified R-Squared" in line)
    sd = next(re.findall(_FLOAT, line)[-1] for line in lines if "Standard Deviation" in line)
    certified = {
        "df_between": float(b[0]), "ss_between": float(b[1]), "ms_between": float(b[2]), "f": float(b[3]),
        "df_within": float(w[0]), "ss_within": float(w[1]), "ms_within": float(w[2]),
        "r_squared": float(r2), "residual_sd": float(sd),
    }
    first, last = next(
        map(int, m.groups()) for line in lines if (m := re.search(r"Data\s+\(lines (\d+) to (\d+)\)", line))
    )
    groups: dict[str, list[str]] = {}
    for line in lines[first - 1 : last]:
        treatment, value = line.split()
        groups.setdefault(treatment, []).append(value)
    return NistDataset(name, difficulty, certified, groups)


def log_relative_error(computed: float, certified: float) -> float:
    """Correct significant digits, capped at the 15 the values are certified to."""
    if computed == certified:
        return CERTIFIED_DIGITS
    if certified == 0.0:
        return -math.log10(abs(computed)) if computed != 0.0 else CERTIFIED_DIGITS
    return min(CERTIFIED_DIGITS, -math.log10(abs(computed - certified) / abs(certified)))


def check(dataset: NistDataset) -> DatasetCheck:
    """Run one dataset through the request path and compare."""
    from familywise.api.parsing import parse_json
    from familywise.api.routing import one_way_data
    from familywise.api.schemas.omnibus import OmnibusRequest
    from familywise.stats.omnibus import anova_table

    request = OmnibusRequest.model_validate(parse_json(dataset.request_json().encode()))
    table = anova_table(one_way_data(request.groups))
    computed = {
        "f": table.f, "ss_between": table.between.ss, "ss_within": table.within.ss,
        "ms_between": table.between.ms, "ms_within": table.within.ms,
        "r_squared": table.r_squared, "residual_sd": table.residual_sd,
    }
    digits = {q: log_relative_error(computed[q], dataset.certified[q]) for q in QUANTITIES}
    certified = dataset.certified
    if table.between.df != certified["df_between"] or table.within.df != certified["df_within"]:
        digits["df"] = 0.0
    return DatasetCheck(dataset.name, dataset.difficulty, dataset.certified, computed, digits)


def run() -> list[DatasetCheck]:
    return [check(load(name)) for name in DATASETS]


def report(checks: list[DatasetCheck]) -> str:
    """The validation report: one line per dataset, then the verdict."""
    lines = [
        f"familywise {__version__}: one-way ANOVA against the NIST StRD certified values",
        f"source: {nist_directory()}",
        f"digits = log relative error, capped at {CERTIFIED_DIGITS:g}; pass needs >= {REQUIRED_DIGITS:g} "
        f"for each of {', '.join(QUANTITIES)}",
        "",
        f"{'dataset':<9} {'difficulty':<10} {'certified F':>22} {'computed F':>22} "
        f"{'digits F':>8} {'fewest':>7}  result",
    ]
    for c in checks:
        lines.append(
            f"{c.name:<9} {c.difficulty:<10} {c.certified['f']:>22.15e} {c.computed['f']:>22.15e} "
            f"{c.digits['f']:>8.1f} {c.worst_digits:>7.1f}  {'pass' if c.passed else 'FAIL'}"
        )
    passed = sum(c.passed for c in checks)
    lines += ["", f"{passed} of {len(checks)} datasets pass."]
    return "\n".join(lines)
