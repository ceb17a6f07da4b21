"""Result dataclasses to JSON-ready structures, and the provenance block."""

from __future__ import annotations

import dataclasses
import hashlib
import math
import platform
from decimal import MAX_EMAX, MAX_PREC, MIN_EMIN, Context, Decimal
from functools import cache
from typing import Any

import numpy as np
import orjson

from familywise import __version__
from familywise.stats.families import Comparison, FamilyResult
from familywise.stats.omnibus import HypothesisTest, Unavailable


def plain(obj: Any) -> Any:
    """Dataclasses, tuples and numpy scalars to dicts, lists and Python numbers.

    A non-finite float is a bug in the statistics layer (JSON cannot carry
    it, and orjson would silently write null): refuse loudly.
    """
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        if isinstance(obj, HypothesisTest):
            return {**{f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)},
                    "unavailable": None}
        if isinstance(obj, Unavailable):
            return {"statistic": None, "df_num": None, "df_den": None, "p_value": None,
                    "unavailable": obj.reason}
        return {f.name: plain(getattr(obj, f.name)) for f in dataclasses.fields(obj)}
    if isinstance(obj, float | np.floating):
        value = float(obj)
        if not math.isfinite(value):
            raise ValueError(f"non-finite number {value!r} in a result")
        return value
    if isinstance(obj, bool | np.bool_):
        return bool(obj)
    if isinstance(obj, int | np.integer):
        return int(obj)
    if isinstance(obj, tuple | list):
        return [plain(x) for x in obj]
    if isinstance(obj, dict):
        return {str(k): plain(v) for k, v in obj.items()}
    return obj


# The row fields every family reports (the design's contract); the others
# appear only where a family fills them.
ROW_FIELDS = frozenset({"first", "second", "difference", "se", "statistic", "df", "p_value",
                        "ci_low", "ci_high", "significant"})


def family_json(result: FamilyResult) -> dict[str, Any]:
    """A FamilyResult as JSON-ready values (faster than ``plain`` for the
    many rows of a family, and leaving out row fields the family does not use)."""
    records = [row.__dict__ for row in result.comparisons]
    filled = set(ROW_FIELDS)
    for record in records:
        filled.update(name for name, value in record.items() if value is not None)
    used = [n for n in _ROW_NAMES if n in filled]
    rows = [{n: r[n] for n in used} for r in records]
    for row in rows:
        for key, value in row.items():
            if type(value) is float and not math.isfinite(value):
                raise ValueError(f"non-finite {key} in a result row")
    body = {name: _simple(getattr(result, name)) for name in _FAMILY_FIELDS}
    body["comparisons"] = rows
    return body


_SCALARS = (str, float, int, bool, type(None))
_ROW_NAMES = tuple(f.name for f in dataclasses.fields(Comparison))
_FAMILY_FIELDS = tuple(f.name for f in dataclasses.fields(FamilyResult) if f.name != "comparisons")


def _simple(value: Any) -> Any:
    kind = type(value)
    if kind in _SCALARS:
        if kind is float and not math.isfinite(value):
            raise ValueError(f"non-finite number {value!r} in a result")
        return value
    if kind is tuple:
        return list(value)
    return plain(value)


# Normalising under the default 28-digit context would round: two requests
# differing in the 29th digit must not share a hash.
_EXACT = Context(prec=MAX_PREC, Emax=MAX_EMAX, Emin=MIN_EMIN)


def _decimal_text(value: Decimal) -> str:
    """A number's canonical text: its exact value, trailing zeros removed
    (41.20 and 41.2 are the same number; so are 0 and -0.0)."""
    return str(_EXACT.normalize(value)) if value else "0"


def _canonical_default(value: Any) -> Any:
    if isinstance(value, Decimal):
        return _decimal_text(value)
    raise TypeError(f"cannot canonicalise {type(value).__name__}")


def canonical_sha256(request: Any) -> str:
    """SHA-256 of the canonical form of a validated request.

    The canonical form is the UTF-8 JSON (keys sorted, no spaces) of the
    request with every default filled in and every number as its exact
    normalised decimal text; the groups' values are written separately as
    one comma-joined line per group after the JSON, which keeps the form
    unambiguous and the hashing cheap for large requests.
    """
    dumped = request.model_dump(mode="python") if hasattr(request, "model_dump") else request
    lines: list[str] = []
    groups = dumped.get("groups") if isinstance(dumped, dict) else None
    if isinstance(groups, list):
        for group in groups:
            if isinstance(group, dict) and isinstance(group.get("values"), list):
                lines.append(",".join(map(_decimal_text, group.pop("values"))))
    text = orjson.dumps(dumped, default=_canonical_default, option=orjson.OPT_SORT_KEYS).decode()
    return hashlib.sha256("\n".join([text, *lines]).encode("utf-8")).hexdigest()


@cache
def library_versions() -> dict[str, str]:
    import fastapi
    import numba
    import pydantic
    import scipy
    import statsmodels

    return {
        "python": platform.python_version(),
        "numpy": np.__version__,
        "scipy": scipy.__version__,
        "numba": numba.__version__,
        "statsmodels": statsmodels.__version__,
        "pydantic": pydantic.__version__,
        "fastapi": fastapi.__version__,
    }


def provenance(request: Any) -> dict[str, Any]:
    return {
        "service": "familywise",
        "version": __version__,
        "input_sha256": canonical_sha256(request),
        "libraries": library_versions(),
    }
