"""Request and response models of POST /v1/contrasts/validate."""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import (
    BaseModel,
    Field,
    PlainValidator,
    ValidationInfo,
    WithJsonSchema,
    field_validator,
    model_validator,
)
from pydantic_core import PydanticCustomError

from familywise.api.schemas.common import Alpha, Group, Integer, Label, Number, Provenance, Strict, _integer

#: Largest group size accepted in ``sizes`` (a design, not data: far above any plate).
MAX_GROUP_SIZE = 10**12


def _size(raw: Any) -> int:
    value = _integer(raw)
    if not 1 <= value <= MAX_GROUP_SIZE:
        raise PydanticCustomError("size_range", "a group size must be a whole number from 1 to {limit}",
                                  {"limit": MAX_GROUP_SIZE})
    return value


GroupSize = Annotated[
    int,
    PlainValidator(_size),
    WithJsonSchema({"type": "integer", "minimum": 1, "maximum": MAX_GROUP_SIZE}),
]

StandardKind = Literal["helmert", "polynomial", "versus_reference", "versus_first", "pairwise"]


class ContrastIn(Strict):
    name: Label = Field(description="Name of the contrast, unique within the request.")
    coefficients: dict[Label, Number] = Field(
        description="Coefficient of each group, keyed by group label; a group left out has coefficient 0. "
                    "The coefficients of a contrast sum to zero.")


class StandardIn(Strict):
    """A standard contrast set to generate for these groups (in the order given)."""

    kind: StandardKind = Field(description=(
        "helmert: each group against the size-weighted mean of the groups before it; polynomial: "
        "orthogonal linear, quadratic, ... trends in numeric levels, for the actual sizes; "
        "versus_reference / versus_first: each group against one reference group (not orthogonal); "
        "pairwise: every pair of groups."))
    levels: dict[Label, Number] | None = Field(
        default=None, validate_default=True,
        description="polynomial only: the numeric level (dose, concentration, pH ...) of every group; "
                    "unequal spacing is allowed, levels must be distinct.")
    reference: Label | None = Field(
        default=None, validate_default=True,
        description="versus_reference only (required): the label of the reference group.")
    degree: Integer | None = Field(
        default=None, validate_default=True,
        description="polynomial only: the highest trend degree (default k - 1, the complete set).")

    @field_validator("levels")
    @classmethod
    def _levels_for_polynomial(cls, value: Any, info: ValidationInfo) -> Any:
        kind = info.data.get("kind")
        if kind == "polynomial" and value is None:
            raise PydanticCustomError("levels_required", "polynomial contrasts need the numeric level of "
                                      "every group")
        if kind != "polynomial" and value is not None:
            raise PydanticCustomError("levels_unused", "levels are used only by kind polynomial")
        return value

    @field_validator("reference")
    @classmethod
    def _reference_for_versus(cls, value: Any, info: ValidationInfo) -> Any:
        kind = info.data.get("kind")
        if kind == "versus_reference" and value is None:
            raise PydanticCustomError("reference_required", "versus_reference needs the label of the "
                                      "reference group")
        if kind not in ("versus_reference", "versus_first") and value is not None:
            raise PydanticCustomError("reference_unused", "reference is used only by versus_reference")
        return value

    @field_validator("degree")
    @classmethod
    def _degree_for_polynomial(cls, value: Any, info: ValidationInfo) -> Any:
        if value is not None:
            if info.data.get("kind") != "polynomial":
                raise PydanticCustomError("degree_unused", "degree is used only by kind polynomial")
            if value < 1:
                raise PydanticCustomError("degree_range", "the highest trend degree must be at least 1")
        return value


class ContrastValidationRequest(Strict):
    """The design (groups with their values, or only the group sizes) and the
    planned contrasts and/or a standard set to check against it."""

    groups: Annotated[list[Group], Field(min_length=2)] | None = Field(
        default=None, description="Two or more groups of measurements (give this or sizes).")
    sizes: Annotated[dict[Label, GroupSize], Field(min_length=2)] | None = Field(
        default=None, description="Group sizes keyed by label, in the group order (give this or groups).")
    contrasts: list[ContrastIn] = Field(default_factory=list, description="The planned contrasts.")
    standard: StandardIn | None = Field(default=None, description="A standard set to generate as well.")
    alpha: Alpha = 0.05

    @model_validator(mode="after")
    def _one_design_and_some_contrasts(self) -> ContrastValidationRequest:
        if (self.groups is None) == (self.sizes is None):
            raise PydanticCustomError("groups_or_sizes", "give exactly one of groups (with values) or sizes "
                                      "(label -> number of values)")
        if not self.contrasts and self.standard is None:
            raise PydanticCustomError("contrasts_or_standard", "give contrasts, a standard set, or both")
        return self


# -- response ---------------------------------------------------------------------


class GroupSizeOut(BaseModel):
    label: str
    n: int


class ContrastOut(BaseModel):
    name: str
    origin: str = Field(description="'given', or the kind of standard set that generated it.")
    coefficients: dict[str, float] = Field(description="Every group's coefficient, in group order.")
    sum: float = Field(description="Sum of the coefficients (correctly rounded).")
    sum_tolerance: float = Field(description="Largest |sum| that counts as zero: 64 eps * sum |c_i|.")
    sums_to_zero: bool
    estimable: bool = Field(description="Sums to zero and involves only groups with n >= 1.")
    normalised_coefficients: dict[str, float] = Field(
        description="Scaled so that the absolute values add up to 2 (positive part 1, negative part -1).")
    variance_factor: float = Field(description="sum c_i^2 / n_i: variance of the estimate over sigma^2.")
    estimate: float | None = Field(description="sum c_i mean_i (with data).")
    ss: float | None = Field(description="Sum of squares estimate^2 / sum(c_i^2 / n_i) (with data).")


class PairOut(BaseModel):
    first: str
    second: str
    weighted_product: float = Field(
        description="sum c_i d_i / n_i: covariance of the two estimates over sigma^2.")
    unweighted_product: float = Field(
        description="sum c_i d_i: what the weighted product would be with equal sizes.")
    correlation: float = Field(description="Correlation of the two estimates under a common variance.")
    orthogonal: bool = Field(description="Weighted product zero for the actual group sizes.")
    orthogonal_for_equal_sizes: bool


class SetOut(BaseModel):
    count: int
    between_df: int = Field(description="k - 1, the most mutually orthogonal contrasts there can be.")
    all_sum_to_zero: bool
    mutually_orthogonal: bool
    orthogonal_for_equal_sizes: bool
    linearly_independent: bool
    rank: int
    exceeds_between_df: bool = Field(description="More than k - 1 contrasts.")
    complete: bool = Field(description="k - 1 mutually orthogonal contrasts that sum to zero.")
    max_abs_correlation: float | None
    ss_between: float | None = Field(description="Between-groups sum of squares (with data).")
    ss_contrasts_total: float | None = Field(description="Sum of the contrasts' SS (with data).")
    ss_partition_holds: bool | None = Field(
        description="For a complete orthogonal set with data: the contrast SS add up to ss_between.")


class StandardOut(BaseModel):
    kind: str
    reference: str | None
    names: list[str]
    orthogonal_by_construction: bool
    description: str


class ContrastValidationResponse(BaseModel):
    alpha: float
    groups: list[GroupSizeOut]
    balanced: bool
    relative_tolerance: float = Field(description="Relative tolerance of the sum-to-zero test (64 eps).")
    pair_tolerance: float = Field(description="Relative tolerance of the orthogonality test.")
    standard: StandardOut | None
    contrasts: list[ContrastOut]
    pairs: list[PairOut]
    set: SetOut
    verdict: Literal["orthogonal", "not_orthogonal", "invalid"]
    consequences: list[str] = Field(description="What the checks mean for testing the set, in plain words.")
    provenance: Provenance
