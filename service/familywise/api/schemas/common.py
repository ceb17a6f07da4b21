"""Types shared by the request and response models.

Numbers arrive from :mod:`familywise.api.parsing` as ``Decimal`` (their exact
text). The types here accept numbers only (never strings or booleans, which
lax validation would coerce) and describe themselves in the OpenAPI schema as
plain JSON numbers.
"""

from __future__ import annotations

import dataclasses
import math
import typing
from decimal import Decimal
from typing import Annotated, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, PlainValidator, WithJsonSchema, create_model
from pydantic_core import PydanticCustomError

MAX_LABEL_LENGTH = 200


class ItemError(ValueError):
    """A bad element of a list; carries its index so the pointer can name it."""

    def __init__(self, index: int, message: str) -> None:
        super().__init__(message)
        self.index = index


def _as_decimal(value: Any) -> Decimal | None:
    kind = type(value)
    if kind is Decimal:
        return value if value.is_finite() else None
    if kind is int:
        return Decimal(value)
    if kind is float:
        return Decimal(repr(value)) if math.isfinite(value) else None
    return None


def _values(raw: Any) -> list[Decimal]:
    if not isinstance(raw, list):
        raise PydanticCustomError("list_type", "must be an array of numbers")
    if not raw:
        raise PydanticCustomError("too_short", "a group needs at least one value")
    out = raw
    for i, v in enumerate(raw):
        if type(v) is not Decimal:
            d = _as_decimal(v)
            if d is None:
                raise ItemError(i, "values must be finite JSON numbers (not strings, booleans or null)")
            if out is raw:
                out = list(raw)
            out[i] = d
        elif not v.is_finite():
            raise ItemError(i, "values must be finite numbers")
    return out


def _number(raw: Any) -> float:
    d = _as_decimal(raw)
    if d is None:
        raise PydanticCustomError("number_type", "must be a finite JSON number")
    value = float(d)
    if not math.isfinite(value):
        raise PydanticCustomError("number_range", "must be within double-precision range")
    return value


#: Whole numbers beyond this are refused before they are converted: every
#: count in a request (groups, sizes, items) is far smaller, and the
#: conversion of 1e999999999 to an int would take minutes and gigabytes.
MAX_INTEGER = 2**53


def _integer(raw: Any) -> int:
    d = _as_decimal(raw)
    if d is None or (d.adjusted() < 20 and d != d.to_integral_value()):
        raise PydanticCustomError("int_type", "must be a whole JSON number")
    if d.adjusted() > 15 or abs(d) > MAX_INTEGER:
        raise PydanticCustomError("int_range", "must be a whole number of magnitude at most {limit}",
                                  {"limit": MAX_INTEGER})
    return int(d)


#: Smallest alpha accepted: no laboratory decision is taken at a smaller
#: error rate, and the quantiles of the intervals leave double precision
#: as alpha approaches the smallest double.
MIN_ALPHA = 1e-10


def _alpha(raw: Any) -> float:
    value = _number(raw)
    if not MIN_ALPHA <= value <= 0.5:
        raise PydanticCustomError("alpha_range", "alpha must lie in [{low}, 0.5]", {"low": MIN_ALPHA})
    return value


Values = Annotated[
    list[Decimal],
    PlainValidator(_values),
    WithJsonSchema({"type": "array", "items": {"type": "number"}, "minItems": 1}),
]
Number = Annotated[float, PlainValidator(_number), WithJsonSchema({"type": "number"})]
Integer = Annotated[int, PlainValidator(_integer), WithJsonSchema({"type": "integer"})]
Alpha = Annotated[
    float,
    PlainValidator(_alpha),
    WithJsonSchema(
        {"type": "number", "minimum": MIN_ALPHA, "maximum": 0.5, "default": 0.05,
         "description": "Error rate of the family (or level of each test): 1e-10 <= alpha <= 0.5."}
    ),
]
Label = Annotated[str, Field(min_length=1, max_length=MAX_LABEL_LENGTH)]


class Strict(BaseModel):
    """Base of every request model: unknown fields are an error, not ignored."""

    model_config = ConfigDict(extra="forbid", frozen=True)


class Group(Strict):
    label: Label = Field(description="Name of the group, unique within the request.")
    values: Values = Field(description="Replicate measurements, as decimal numbers.")


class GroupsRequest(Strict):
    groups: list[Group] = Field(min_length=2, description="Two or more groups of measurements.")
    alpha: Alpha = 0.05


ErrorRate = Literal["familywise", "per_comparison", "false_discovery"]


class Provenance(BaseModel):
    service: str
    version: str
    input_sha256: str = Field(description="SHA-256 of the canonical form of the validated request.")
    libraries: dict[str, str]


def response_model(name: str, source: type, descriptions: dict[str, str] | None = None,
                   **extra: Any) -> type[BaseModel]:
    """A response model with the fields of a result dataclass of the statistics
    layer (same names and types), optional descriptions, and extra fields
    (for example ``provenance=(Provenance, ...)``): one definition of each
    result's shape, not two that can drift apart."""
    descriptions = descriptions or {}
    hints = typing.get_type_hints(source)
    fields: dict[str, Any] = {
        f.name: (hints[f.name], Field(description=descriptions.get(f.name)))
        for f in dataclasses.fields(source)
    }
    return create_model(name, __base__=BaseModel, **fields, **extra)
