"""POST /v1/figures/{means, differences}: SVG (default) or PNG pictures.

The route chooses the format from the Accept header before the body is read
(image/png gives PNG; image/svg+xml, a wildcard or no header gives SVG;
anything else is refused with 406) and hands it to the endpoint in a context
variable, so that the endpoints keep the one-parameter form FamilywiseRoute
calls, and the drawing counts as the request's computation (its metrics, and
for large requests its worker thread and time limit).
"""

from __future__ import annotations

from collections.abc import Callable, Coroutine
from contextvars import ContextVar
from typing import Annotated, Any

from fastapi import APIRouter, Body, Request, Response
from fastapi.exceptions import RequestValidationError
from pydantic import ValidationError

from familywise import __version__, figures
from familywise.api import examples, operations
from familywise.api.problems import ProblemError
from familywise.api.routing import ACCEPTS_CSV, OffloadedRoute, one_way_data
from familywise.api.schemas.families import ContrastsRequest
from familywise.api.schemas.figures import DifferencesFigureRequest, MeansFigureRequest
from familywise.api.schemas.problem import STANDARD_REFUSALS
from familywise.api.serialize import canonical_sha256
from familywise.stats.data import summarise
from familywise.stats.families import pairwise

# --------------------------------------------------------------------------
# content negotiation
# --------------------------------------------------------------------------

_OFFERS = (("svg", "image", "svg+xml"), ("png", "image", "png"))


def negotiate(accept: str | None) -> str:
    """"svg" or "png" for an Accept header (RFC 9110, section 12.5.1), or a 406 problem.

    Each format takes the quality of the most specific media range that
    matches it; the higher quality wins. On a tie PNG wins when image/png is
    named explicitly, SVG otherwise (so */*, image/* and no header give SVG).
    """
    if accept is None or not accept.strip():
        return "svg"
    ranges = []
    for part in accept.split(","):
        media, *params = part.split(";")
        kind, _, sub = media.strip().lower().partition("/")
        if not kind or not sub:
            continue
        q = 1.0
        for param in params:
            name, _, value = param.partition("=")
            if name.strip().lower() == "q":
                try:
                    q = min(1.0, max(0.0, float(value.strip())))
                except ValueError:
                    q = 0.0
        ranges.append((kind, sub, q))
    scored = []
    for fmt, kind, sub in _OFFERS:
        matches = [(3 if (k, s) == (kind, sub) else 2 if (k, s) == (kind, "*") else 1, q)
                   for k, s, q in ranges if (k, s) in ((kind, sub), (kind, "*"), ("*", "*"))]
        if matches:
            specificity, q = max(matches)
            scored.append((q, specificity, fmt == ("png" if specificity == 3 else "svg"), fmt))
    if scored:
        q, _, _, fmt = max(scored)
        if q > 0.0:
            return fmt
    shown = accept if len(accept) <= 200 else accept[:200] + "…"
    raise ProblemError("not-acceptable", f"cannot answer Accept: {shown!r}; figures come as "
                       "image/svg+xml (the default) or image/png", rule="accept")


#: The negotiated format of the request being answered ("svg" outside a request).
FORMAT: ContextVar[str] = ContextVar("familywise_figure_format", default="svg")


class FigureRoute(OffloadedRoute):
    """A route that negotiates the figure's format before anything else, and
    draws off the event loop (a figure takes a tenth of a second or more)."""

    def get_route_handler(self) -> Callable[[Request], Coroutine[Any, Any, Response]]:
        inner = super().get_route_handler()

        async def handler(request: Request) -> Response:
            token = FORMAT.set(negotiate(request.headers.get("accept")))
            try:
                return await inner(request)
            finally:
                FORMAT.reset(token)

        return handler


def figure_response(draw: Callable[[str], bytes], name: str) -> Response:
    """The figure drawn in the negotiated format, named for saving as is."""
    fmt = FORMAT.get()
    return Response(draw(fmt), media_type=figures.MEDIA_TYPES[fmt], headers={
        "Content-Disposition": f'inline; filename="{name}.{fmt}"', "Vary": "Accept"})


router = APIRouter(route_class=FigureRoute, tags=["figures"])

FIGURE_RESPONSES: dict[int | str, dict[str, Any]] = {
    200: {
        "description": "The figure, SVG unless the Accept header asks for image/png. Each interval "
                       "mark is an SVG group with id interval-0, interval-1, ... (one per group or "
                       "comparison); the file's metadata carries the input SHA-256.",
        "content": {
            "image/svg+xml": {"schema": {"type": "string"}},
            "image/png": {"schema": {"type": "string", "format": "binary"}},
        },
    },
    406: {
        "description": "The Accept header admits neither image/svg+xml nor image/png.",
        "content": {"application/problem+json": {"schema": {"$ref": "#/components/schemas/Problem"}}},
    },
    **STANDARD_REFUSALS,
}


def _text(request: MeansFigureRequest | DifferencesFigureRequest, path: str) -> figures.FigureText:
    return figures.FigureText(
        value_label=request.value_label, title=request.title,
        description=f"familywise {__version__}, POST {path}, input SHA-256 {canonical_sha256(request)}")


def _check_rows(rows: int, pointer: str, what: str) -> None:
    if rows > figures.MAX_ROWS:
        raise ProblemError(
            "limit-exceeded", f"a figure draws at most {figures.MAX_ROWS} rows, and {what} give {rows}: "
            "ask the follow-up endpoint for the numbers, or draw fewer groups",
            pointer=pointer, rule="figure_max_rows")


# --------------------------------------------------------------------------
# the means figure
# --------------------------------------------------------------------------


@router.post(
    "/v1/figures/means",
    response_class=Response,
    response_model=None,
    summary="Picture: group means with their intervals and the compact letters",
    responses=FIGURE_RESPONSES,
    openapi_extra=ACCEPTS_CSV,
)
async def means_figure_endpoint(
    request: Annotated[MeansFigureRequest, Body(openapi_examples={"buffer plate": {
        "summary": "Buffer plate: each group's interval and the Tukey-Kramer letters",
        "value": examples.FIGURE_MEANS}})],
) -> Response:
    """One row per group: the mean (filled dot), its t interval (capped bar; from the
    group's own SD, or the pooled SD with `interval: pooled`), the replicate values
    (open dots), and on the right the compact letters of `letters_method`. SVG by
    default, PNG on `Accept: image/png`."""
    _check_rows(len(request.groups), "/groups", f"{len(request.groups)} groups")
    data = one_way_data(request.groups)
    summaries = summarise(data, request.alpha)
    if request.interval == "pooled":
        summaries = figures.pooled_summaries(data, summaries, request.alpha)
    letters = pairwise(data, request.letters_method, request.alpha) if request.letters_method else None
    values = [(data.centre + d).tolist() for d in data.deviations] if request.show_values else None
    text = _text(request, "/v1/figures/means")
    return figure_response(lambda fmt: figures.means_figure(
        summaries, alpha=request.alpha, interval=request.interval, text=text, fmt=fmt, values=values,
        letters=letters, error_df=data.df_within), "familywise-means")


# --------------------------------------------------------------------------
# the differences figure
# --------------------------------------------------------------------------

#: Methods that give decisions without intervals, the field naming them, and what to choose instead.
STEPWISE = {
    ("pairwise", "holm"): ("/method", "tukey_kramer, games_howell, bonferroni, sidak or lsd"),
    ("pairwise", "benjamini_hochberg"): ("/method", "tukey_kramer, games_howell, bonferroni, sidak or lsd"),
    ("pairwise", "dunn"): ("/method", "tukey_kramer, games_howell, bonferroni, sidak or lsd"),
    ("control", "dunnett_stepdown"): ("/method", "dunnett"),
    ("contrasts", "holm"): ("/adjustment", "multivariate_t, bonferroni, sidak, scheffe or none"),
}


@router.post(
    "/v1/figures/differences",
    response_class=Response,
    response_model=None,
    summary="Picture: a follow-up family's intervals against zero",
    responses=FIGURE_RESPONSES,
    openapi_extra=ACCEPTS_CSV,
)
async def differences_figure_endpoint(
    request: Annotated[DifferencesFigureRequest, Body(openapi_examples={
        "pairwise": {"summary": "Buffer plate: Tukey-Kramer intervals of every pair",
                     "value": examples.FIGURE_DIFFERENCES_PAIRWISE},
        "control": {"summary": "Unbalanced plate: one-sided Dunnett intervals against the reference",
                    "value": examples.FIGURE_DIFFERENCES_CONTROL},
    })],
) -> Response:
    """One row per comparison of the family (`family` and that family's options, as
    /v1/followup/{family} takes them): the estimate (dot) and its interval (bar),
    filled and solid when significant, open and dashed when not, a line at zero,
    and the adjusted p-values on the right. One-sided intervals run to the edge and
    end in an arrowhead. Stepwise methods, which give no intervals, are refused."""
    try:
        follow = request.follow_up()
    except ValidationError as exc:
        raise RequestValidationError(
            [{**e, "loc": ("body", *e["loc"])} for e in exc.errors(include_url=False)]) from None
    option = follow.adjustment if isinstance(follow, ContrastsRequest) else getattr(follow, "method", None)
    if (request.family, option) in STEPWISE:
        _refuse_stepwise(request.family, option)
    k = len(follow.groups)
    rows = {"pairwise": k * (k - 1) // 2, "control": k - 1, "best": k}.get(
        request.family, len(getattr(follow, "contrasts", None) or ()))
    _check_rows(rows, "/contrasts" if request.family == "contrasts" else "/groups",
                f"the {request.family} comparisons of this request")
    result = operations.compute_family(follow)
    if result.interval == "none":  # the protected LSD after a non-significant F test
        detail = ("no intervals to draw: " + (result.notes[-1] if result.notes else
                                              f"{result.method} gave no intervals for these data"))
        raise ProblemError("unanalysable-data", detail, pointer="/method", rule="figure-needs-intervals")
    text = _text(request, "/v1/figures/differences")
    return figure_response(lambda fmt: figures.differences_figure(result, text=text, fmt=fmt),
                           f"familywise-differences-{request.family}")


def _refuse_stepwise(family: str, method: str) -> None:
    pointer, instead = STEPWISE.get((family, method), ("/method", "a single-step method"))
    detail = (f"{method} gives decisions, not intervals, so there is nothing to draw; choose {instead} "
              f"for the figure (the decisions are at /v1/followup/{family})")
    raise ProblemError("invalid-input", detail, pointer=pointer, rule="figure-needs-intervals",
                       errors=[{"pointer": pointer, "rule": "figure-needs-intervals", "detail": detail}])


