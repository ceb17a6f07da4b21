"""What exact decimal ingestion costs (issue 2): a 10,000-value request.

Compared in one process on the same body:

* plain float path: ``orjson.loads`` then float arrays (``OneWayData.from_arrays``);
* familywise's exact path: ``parsing.parse_json`` (numbers as Decimal,
  duplicate keys refused), request-model validation, and
  ``OneWayData.from_decimals`` (exact deviations from a common centre).

The omnibus computation itself is timed too, for scale.
"""

from __future__ import annotations

import time

import numpy as np
import orjson

from familywise.api.parsing import parse_json
from familywise.api.routing import one_way_data
from familywise.api.schemas.omnibus import OmnibusRequest
from familywise.stats.data import OneWayData
from familywise.stats.omnibus import omnibus


def _median(f, repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        f()
        times.append(time.perf_counter() - start)
    return float(np.median(times))


def run(quick: bool = False) -> bool:
    rng = np.random.default_rng(7)
    groups = [{"label": f"analyte well group {g}", "values": [round(float(v), 3) for v in rng.normal(812, 15, 1000)]}
              for g in range(10)]
    body = orjson.dumps({"groups": groups, "alpha": 0.05})
    repeats = 5 if quick else 30

    def float_path():
        obj = orjson.loads(body)
        return OneWayData.from_arrays([g["label"] for g in obj["groups"]], [g["values"] for g in obj["groups"]])

    def exact_path():
        return one_way_data(OmnibusRequest.model_validate(parse_json(body)).groups)

    float_path(), exact_path()
    plain = _median(float_path, repeats)
    exact = _median(exact_path, repeats)
    compute = _median(lambda: omnibus(exact_path(), 0.05), repeats) - exact
    print(f"\nIngestion of a 10,000-value request ({len(body) / 1e3:.0f} kB), median of {repeats}")
    print(f"  plain float parsing (orjson + float arrays):     {plain * 1e3:7.2f} ms")
    print(f"  exact decimal ingestion (familywise):            {exact * 1e3:7.2f} ms  "
          f"({exact / plain:.1f}x, +{(exact - plain) * 1e6 / 10_000:.2f} us per value)")
    print(f"  omnibus analysis on top (ANOVA, tests, effects): {compute * 1e3:7.2f} ms")
    return True
