"""JSON text of request bodies, numbers with exactly the digits they hold.

The standard library's encoder knows no ``Decimal`` and would need it turned
into a float (losing digits) or a string (which the service refuses). This
small writer emits a Decimal as its own decimal text, which is always a valid
JSON number for a finite Decimal (``1000000000000.4``, ``1.5E+3``, ``-0``);
floats as their shortest round-trip text; integers as they are.
"""

from __future__ import annotations

import json
import math
from collections.abc import Callable, Mapping
from decimal import Decimal
from typing import Any

_string = json.JSONEncoder(ensure_ascii=False).encode


def dumps(value: Any) -> bytes:
    """UTF-8 JSON text of ``value`` (dicts with string keys, lists, tuples, str, int, float, Decimal,
    bool, None); ValueError for NaN or infinities, TypeError for anything else."""
    out: list[str] = []
    _write(value, out.append)
    return "".join(out).encode("utf-8")


def _write(value: Any, emit: Callable[[str], Any]) -> None:
    if value is None:
        emit("null")
    elif value is True:
        emit("true")
    elif value is False:
        emit("false")
    elif isinstance(value, str):
        emit(_string(value))
    elif isinstance(value, Decimal):
        if not value.is_finite():
            raise ValueError(f"{value} is not a finite number and has no JSON form")
        emit(str(value))
    elif isinstance(value, int):
        emit(int.__repr__(value))
    elif isinstance(value, float):
        if not math.isfinite(value):
            raise ValueError(f"{value} is not a finite number and has no JSON form")
        emit(float.__repr__(value))
    elif isinstance(value, Mapping):
        emit("{")
        for i, (key, item) in enumerate(value.items()):
            if not isinstance(key, str):
                raise TypeError(f"JSON object keys must be strings, not {type(key).__name__}")
            emit(("," if i else "") + _string(key) + ":")
            _write(item, emit)
        emit("}")
    elif isinstance(value, list | tuple):
        emit("[")
        for i, item in enumerate(value):
            if i:
                emit(",")
            _write(item, emit)
        emit("]")
    else:
        raise TypeError(f"{type(value).__name__} has no JSON form")
