"""Request models of the figures.

The differences figure takes the follow-up families' own options, named and
validated exactly as the follow-up endpoints take them: the request carries
them flat next to ``family``, and :meth:`DifferencesFigureRequest.follow_up`
hands them to that family's request model (PairwiseRequest, ControlRequest,
BestRequest, ContrastsRequest), so that every rule and default is theirs.
"""

from __future__ import annotations

from typing import Literal

from pydantic import Field, StrictBool, ValidationError
from pydantic_core import InitErrorDetails, PydanticCustomError

from familywise.api.schemas.common import GroupsRequest, Label, Strict
from familywise.api.schemas.families import (
    Alternative,
    BestRequest,
    Contrast,
    ContrastAdjustment,
    ContrastsRequest,
    ControlMethod,
    ControlRequest,
    DunnAdjustment,
    PairwiseMethod,
    PairwiseRequest,
)
from familywise.figures import MAX_DRAWN_VALUES, MAX_ROWS

Family = Literal["pairwise", "control", "best", "contrasts"]

FAMILY_REQUESTS: dict[str, type[GroupsRequest]] = {
    "pairwise": PairwiseRequest,
    "control": ControlRequest,
    "best": BestRequest,
    "contrasts": ContrastsRequest,
}


class FigureLabels(Strict):
    title: Label | None = Field(None, description="Title printed above the figure (none by default).")
    value_label: Label = Field(
        "value", description="What was measured, with its unit, e.g. 'specific activity (U/mg)': the "
                             "value axis of the means figure, and of the differences ('difference in ...').")


class MeansFigureRequest(GroupsRequest, FigureLabels):
    interval: Literal["group", "pooled"] = Field(
        "group",
        description="group (default): each mean's t interval from its own SD, which shows unequal "
                    "spreads as they are; pooled: t intervals from the pooled within-group SD with "
                    "N - k df, the variance the pooled-variance comparisons use. Either way, the "
                    "interval of each mean is not a comparison of means: the letters are.")
    letters_method: PairwiseMethod | None = Field(
        "tukey_kramer",
        description="Pairwise method whose compact letters are printed beside each group (as "
                    "/v1/followup/pairwise computes them, with that endpoint's defaults); null: no letters.")
    show_values: StrictBool = Field(
        True, description="Draw the replicate values under each interval (left out, and said so in the "
                          f"key, beyond {MAX_DRAWN_VALUES} values).")


class DifferencesFigureRequest(GroupsRequest, FigureLabels):
    family: Family = Field(
        description="Which follow-up family to draw: pairwise, control, best or contrasts. The other "
                    "fields are that family's options, as /v1/followup/{family} takes them; an option "
                    f"of another family is refused. A figure draws at most {MAX_ROWS} comparisons.")
    method: PairwiseMethod | ControlMethod | None = Field(
        None, description="pairwise: tukey_kramer (default), lsd, bonferroni, sidak, games_howell; "
                          "control: dunnett (default). Stepwise methods (holm, benjamini_hochberg, "
                          "dunn, dunnett_stepdown) give decisions without intervals and are refused here.")
    protected: StrictBool | None = Field(None, description="pairwise, lsd only: Fisher's protected LSD.")
    dunn_adjustment: DunnAdjustment | None = Field(
        None, description="pairwise, dunn only (refused here, as Dunn's test has no intervals).")
    control: Label | None = Field(None, description="control (required): label of the control group.")
    alternative: Alternative | None = Field(
        None, description="control: two_sided (default), greater or less; one-sided intervals are "
                          "drawn open towards the unbounded side.")
    best: Literal["highest", "lowest"] | None = Field(
        None, description="best: whether the best group has the highest (default) or lowest mean.")
    contrasts: list[Contrast] | None = Field(
        None, min_length=1, description="contrasts (required): the contrasts, as /v1/followup/contrasts.")
    adjustment: ContrastAdjustment | None = Field(
        None, description="contrasts: none (default), bonferroni, sidak, multivariate_t, scheffe; "
                          "holm gives no intervals and is refused here.")

    def follow_up(self) -> GroupsRequest:
        """The family's own request (PairwiseRequest, ...), validated by its own model.

        Raises pydantic's ValidationError, with locations that are the
        fields of this request, when an option belongs to another family or
        breaks the family's rules.
        """
        model = FAMILY_REQUESTS[self.family]
        given = {name: getattr(self, name) for name in self.model_fields_set
                 if name not in ("family", "title", "value_label")}
        given.setdefault("alpha", self.alpha)
        foreign = sorted(set(given) - set(model.model_fields))
        if foreign:
            own = sorted(set(model.model_fields) - set(GroupsRequest.model_fields))
            takes = f"it takes {', '.join(own)}" if own else "it takes no options"
            raise ValidationError.from_exception_data(model.__name__, [
                InitErrorDetails(
                    type=PydanticCustomError("not_an_option_of_family",
                                             f"not an option of the {self.family} family ({takes})"),
                    loc=(name,), input=given[name])
                for name in foreign
            ])
        return model.model_validate(given)
