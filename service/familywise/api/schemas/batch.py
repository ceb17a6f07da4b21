"""Request and response models of POST /v1/batch."""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, Field

from familywise.api.schemas.common import Provenance, Strict
from familywise.api.schemas.problem import Problem

Operation = Literal["omnibus", "pairwise", "control", "best", "contrasts", "equivalence", "validate_contrasts",
                    "recommendation", "analysis", "plan"]


class BatchItem(Strict):
    id: str = Field(min_length=1, max_length=200, description="The caller's identifier of the item, unique.")
    operation: Operation = Field(description="Which endpoint's computation (omnibus, pairwise, ...).")
    request: dict[str, Any] = Field(description="That endpoint's request body.")


class BatchRequest(Strict):
    items: list[BatchItem] = Field(min_length=1, description="The analyses; ids must be unique.")


class BatchResult(BaseModel):
    id: str
    status: int = Field(description="200, or the status the item's problem would have had on its own.")
    result: dict[str, Any] | None = Field(None, description="The operation's result (no provenance).")
    problem: Problem | None = None


class BatchResponse(BaseModel):
    results: list[BatchResult]
    provenance: Provenance
