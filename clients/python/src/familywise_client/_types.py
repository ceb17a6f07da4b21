"""Base classes and number types of the generated models (models.py).

Request numbers keep the exact value they were given: an ``int`` stays an
int, a ``float`` a float (written with its shortest round-trip digits) and a
``decimal.Decimal`` keeps every digit, because the service computes from the
decimal text it receives. Strings, booleans, NaN and infinities are refused
here, before anything is sent, as the service would refuse them.
"""

from __future__ import annotations

import math
import numbers
from decimal import Decimal
from typing import Annotated, Any

from pydantic import BaseModel, ConfigDict, PlainValidator, WithJsonSchema
from pydantic_core import PydanticCustomError


def _number(value: Any) -> int | float | Decimal:
    if isinstance(value, bool):
        raise PydanticCustomError("number_type", "must be a number, not a boolean")
    if isinstance(value, Decimal):
        if not value.is_finite():
            raise PydanticCustomError("number_finite", "must be a finite number")
        return value
    if isinstance(value, float):  # also numpy.float64, a float subclass
        if not math.isfinite(value):
            raise PydanticCustomError("number_finite", "must be a finite number")
        return float(value)
    if isinstance(value, numbers.Integral):  # int, numpy integers
        return int(value)
    raise PydanticCustomError(
        "number_type", "must be an int, a float or a decimal.Decimal, not {kind}", {"kind": type(value).__name__})


def _integer(value: Any) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise PydanticCustomError("int_type", "must be a whole number (int), not {kind}",
                                  {"kind": type(value).__name__})
    return int(value)


#: A request number: int, float or Decimal, sent with exactly the digits it holds.
Number = Annotated[int | float | Decimal, PlainValidator(_number), WithJsonSchema({"type": "number"})]
#: A request whole number.
Integer = Annotated[int, PlainValidator(_integer), WithJsonSchema({"type": "integer"})]


class RequestModel(BaseModel):
    """Base of the request models: unknown fields are refused, as the service refuses them.

    Only the fields you set are sent (the service fills in its own defaults),
    so the defaults shown on the models are the service's, for reading.
    """

    model_config = ConfigDict(extra="forbid", frozen=True, populate_by_name=True)


class ResponseModel(BaseModel):
    """Base of the response models: fields the client does not know yet are kept, not refused."""

    model_config = ConfigDict(extra="allow", populate_by_name=True)
