"""Result dataclasses to JSON-ready structures, and the provenance block."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import math
import platform
from decimal import Decimal
from functools import cache
from typing import Any

import numpy as np

from familywise import __version__
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


def _canonical_default(value: Any) -> Any:
    if isinstance(value, Decimal):
        return format(value.normalize(), "f") if abs(value.adjusted()) < 40 else str(value.normalize())
    raise TypeError(f"cannot canonicalise {type(value).__name__}")


def canonical_sha256(request: Any) -> str:
    """SHA-256 of the canonical JSON of a validated request: keys sorted, no
    spaces, numbers in their exact normalised decimal form, defaults filled in."""
    dumped = request.model_dump(mode="python") if hasattr(request, "model_dump") else request
    text = json.dumps(dumped, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                      default=_canonical_default)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


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
