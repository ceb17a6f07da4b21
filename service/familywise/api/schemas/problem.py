"""The problem-details document (RFC 9457), for the schema."""

from __future__ import annotations

from pydantic import BaseModel, Field


class FieldError(BaseModel):
    pointer: str = Field(description="JSON pointer (RFC 6901) to the offending field.")
    rule: str = Field(description="Identifier of the rule the field breaks.")
    detail: str


class Problem(BaseModel):
    type: str = Field(description="Path on this service that describes the kind of problem.")
    title: str
    status: int
    detail: str
    pointer: str | None = Field(default=None, description="JSON pointer to the field at fault.")
    rule: str | None = None
    errors: list[FieldError] | None = None


def problem_responses(*statuses: int) -> dict[int | str, dict]:
    """OpenAPI ``responses`` entries for the given refusal statuses."""
    descriptions = {
        400: "Malformed body (invalid JSON or CSV, duplicate key, NaN literal, too deep).",
        401: "Missing or invalid API key.",
        413: "Body larger than the configured limit.",
        415: "Unsupported content type.",
        422: "Invalid input, a configured limit exceeded, or data the method cannot analyse.",
        503: "The computation exceeded the configured time limit, or the server worker is already running "
             "its share of long computations (Retry-After says when to try again).",
    }
    return {
        status: {
            "description": descriptions[status],
            "content": {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}},
        }
        for status in statuses
    }


STANDARD_REFUSALS = problem_responses(400, 401, 413, 415, 422, 503)
