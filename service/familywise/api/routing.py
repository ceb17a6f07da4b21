"""The route class every familywise endpoint uses.

It replaces FastAPI's body decoding with :mod:`familywise.api.parsing`
(exact decimals, duplicate keys refused, CSV where the endpoint allows it),
checks the media type, and applies the configured size limits before any
model validation or computation.
"""

from __future__ import annotations

import asyncio
import contextvars
import threading
import time
import typing
from collections.abc import Callable, Coroutine
from typing import Any

import orjson
from fastapi import Request, Response
from fastapi.exceptions import RequestValidationError
from fastapi.routing import APIRoute
from pydantic import BaseModel, ValidationError

from familywise.api import metrics
from familywise.api.parsing import CSV_FORMAT_PARAMETERS, parse_csv, parse_json, query_fields
from familywise.api.problems import ProblemError
from familywise.api.settings import Settings

JSON_TYPES = ("application/json",)
CSV_TYPES = ("text/csv",)


def media_type(request: Request) -> str:
    return request.headers.get("content-type", "").split(";", 1)[0].strip().lower()


def _count_values(groups: list) -> int:
    return sum(len(g["values"]) for g in groups if isinstance(g, dict) and isinstance(g.get("values"), list))


def _limit(count: int, limit: int, what: str, variable: str, pointer: str, rule: str) -> None:
    if count > limit:
        raise ProblemError("limit-exceeded", f"{count} {what} exceed the limit of {limit} ({variable})",
                           pointer=pointer, rule=rule)


def check_limits(obj: Any, settings: Settings, pointer: str = "") -> None:
    """Refuse requests larger than the configured limits, naming the limit."""
    if not isinstance(obj, dict):
        return
    groups = obj.get("groups")
    if isinstance(groups, list):
        _limit(len(groups), settings.max_groups, "groups", "FAMILYWISE_MAX_GROUPS", f"{pointer}/groups",
               "max_groups")
        _limit(_count_values(groups), settings.max_values, "values", "FAMILYWISE_MAX_VALUES",
               f"{pointer}/groups", "max_values")
    sizes = obj.get("sizes")
    if isinstance(sizes, dict):
        _limit(len(sizes), settings.max_groups, "groups", "FAMILYWISE_MAX_GROUPS", f"{pointer}/sizes",
               "max_groups")
    contrasts = obj.get("contrasts")
    if isinstance(contrasts, list):
        _limit(len(contrasts), settings.max_contrasts, "contrasts", "FAMILYWISE_MAX_CONTRASTS",
               f"{pointer}/contrasts", "max_contrasts")
    items = obj.get("items")
    if isinstance(items, list):
        _limit(len(items), settings.max_batch_items, "items", "FAMILYWISE_MAX_BATCH_ITEMS", f"{pointer}/items",
               "max_batch_items")
        total = 0
        for i, item in enumerate(items):
            if isinstance(item, dict) and isinstance(item.get("request"), dict):
                request = item["request"]
                check_limits(request, settings, f"{pointer}/items/{i}/request")
                if isinstance(request.get("groups"), list):
                    total += _count_values(request["groups"])
        _limit(total, settings.max_values * 10, "values in one batch", "ten times FAMILYWISE_MAX_VALUES",
               f"{pointer}/items", "max_batch_values")


class FamilywiseRoute(APIRoute):
    """APIRoute with exact JSON decoding, optional CSV, limits, and a direct call.

    An endpoint takes one parameter, its request model (``Annotated[Model,
    Body(...)]`` so that FastAPI documents it), and returns a Response. The
    handler decodes the body itself (see :mod:`familywise.api.parsing`),
    validates the model, and calls the endpoint, skipping FastAPI's generic
    dependency resolution, which would cost more per request than most of
    the statistics.
    """

    #: Run every request of the route off the event loop (under the time limit),
    #: not only the large ones: for routes whose work is slow at any size.
    offload = False

    def __init__(self, *args: Any, **kwargs: Any) -> None:
        extra = kwargs.get("openapi_extra") or {}
        self.accepts_csv = bool(extra.get("x-accepts-csv"))
        super().__init__(*args, **kwargs)

    def get_route_handler(self) -> Callable[[Request], Coroutine[Any, Any, Response]]:
        model, wants_settings = _request_model(self.endpoint)
        if model is None:
            return super().get_route_handler()
        accepts_csv = self.accepts_csv
        if wants_settings:
            bare = self.endpoint

            def endpoint(validated: BaseModel, settings: Settings) -> Coroutine[Any, Any, Response]:
                return bare(validated, settings=settings)
        else:
            plain_endpoint = self.endpoint

            def endpoint(validated: BaseModel, settings: Settings) -> Coroutine[Any, Any, Response]:
                return plain_endpoint(validated)

        operation = self.path
        offload = self.offload

        async def handler(request: Request) -> Response:
            obj = await decode_body(request, accepts_csv, model)
            try:
                validated = model.model_validate(obj)
            except ValidationError as exc:
                raise RequestValidationError(
                    [{**e, "loc": ("body", *e["loc"])} for e in exc.errors(include_url=False)], body=obj
                ) from None
            started = time.perf_counter()
            settings: Settings = request.app.state.settings
            if offload or is_large(obj, settings):
                response = await _bounded(endpoint(validated, settings), settings.compute_timeout_seconds)
            else:
                response = await endpoint(validated, settings)
            metrics.COMPUTATION.labels(operation).observe(time.perf_counter() - started)
            return response

        return handler


class OffloadedRoute(FamilywiseRoute):
    """A route whose every request runs off the event loop under the time
    limit: for work that is slow whatever the request's size (planning by
    simulation)."""

    offload = True


#: Requests up to these sizes are computed inline (their cost is bounded well
#: below the time limit); larger ones run in a worker thread under the limit.
INLINE_GROUPS = 40
INLINE_VALUES = 20_000
INLINE_CONTRASTS = 40
#: A general multivariate t by quasi-Monte Carlo costs milliseconds for a few
#: contrasts and seconds for a few dozen: beyond this many, off the event loop.
INLINE_MULTIVARIATE_T = 8


def is_large(obj: Any, settings: Settings) -> bool:
    """Whether a request may take long enough to need the time limit."""
    if not isinstance(obj, dict):
        return False
    groups = obj.get("groups")
    if isinstance(groups, list) and (len(groups) > INLINE_GROUPS or _count_values(groups) > INLINE_VALUES):
        return True
    contrasts = obj.get("contrasts")
    if isinstance(contrasts, list) and (len(contrasts) > INLINE_CONTRASTS or (
            obj.get("adjustment") == "multivariate_t" and len(contrasts) > INLINE_MULTIVARIATE_T)):
        return True
    standard = obj.get("standard")
    if isinstance(standard, dict) and isinstance(obj.get("sizes"), dict) and len(obj["sizes"]) > INLINE_GROUPS:
        return True
    return isinstance(obj.get("items"), list)


#: Long computations run in threads of their own. A thread that outlives the
#: time limit cannot be stopped and finishes its work, so at most this many run
#: at once in a server worker; a request beyond them is answered 503 at once
#: (retry later) instead of queueing behind work whose callers have gone.
OFFLOAD_SLOTS = 4
_slots = threading.BoundedSemaphore(OFFLOAD_SLOTS)


def _run_in_slot(work: Coroutine[Any, Any, Response]) -> Response:
    try:
        return asyncio.run(work)
    finally:
        _slots.release()


async def _bounded(work: Coroutine[Any, Any, Response], limit: float) -> Response:
    """Run the endpoint's coroutine in a worker thread; answer 503 when it
    exceeds the limit, or when OFFLOAD_SLOTS long computations are already
    running.

    The thread cannot be stopped from outside and finishes its work (its slot
    is freed then), but the worker process keeps answering other requests
    meanwhile.
    """
    if not _slots.acquire(blocking=False):
        work.close()
        raise ProblemError(
            "computation-busy",
            f"{OFFLOAD_SLOTS} long computations are already running in this server worker; retry shortly",
            rule="offload_slots", headers={"Retry-After": "5"},
        )
    # the request's context variables go with it, as asyncio.to_thread would take them
    context = contextvars.copy_context()
    future = asyncio.get_running_loop().run_in_executor(None, context.run, _run_in_slot, work)
    try:
        return await asyncio.wait_for(future, limit)
    except TimeoutError:
        raise ProblemError(
            "computation-timeout",
            f"the computation took longer than {limit:g} s (FAMILYWISE_COMPUTE_TIMEOUT_SECONDS); "
            "split the request or raise the limit",
            rule="compute_timeout_seconds", headers={"Retry-After": "30"},
        ) from None


def _request_model(endpoint: Callable[..., Any]) -> tuple[type[BaseModel] | None, bool]:
    """The pydantic model of an endpoint's request parameter, if it has one,
    and whether it also takes the service's ``settings``."""
    hints = typing.get_type_hints(endpoint, include_extras=True)
    hints.pop("return", None)
    wants_settings = hints.pop("settings", None) is not None
    if len(hints) != 1:
        return None, False
    annotation = next(iter(hints.values()))
    if typing.get_origin(annotation) is typing.Annotated:
        annotation = typing.get_args(annotation)[0]
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation, wants_settings
    return None, False


async def decode_body(request: Request, accepts_csv: bool, model: type[BaseModel]) -> Any:
    """The request body as Python objects (numbers as Decimal), within limits.

    A CSV body gives the groups; the request's other fields come from the
    query string, each typed by ``model``'s field of that name
    (:func:`familywise.api.parsing.query_fields`)."""
    kind = media_type(request)
    raw = await request.body()
    settings: Settings = request.app.state.settings
    if kind in JSON_TYPES or (kind == "" and raw[:1] in (b"{", b"[")):
        obj = parse_json(raw)
    elif accepts_csv and kind in CSV_TYPES:
        params = request.query_params.multi_items()
        fields = query_fields(params, model)  # a repeated parameter is refused before the CSV is parsed
        obj = parse_csv(raw, {k: v for k, v in params if k in CSV_FORMAT_PARAMETERS})
        obj.update(fields)
    else:
        allowed = "application/json" + (" or text/csv" if accepts_csv else "")
        raise ProblemError(
            "unsupported-media-type",
            f"content type {kind or '(none)'!r} is not accepted here: send {allowed}",
            rule="media-type",
        )
    check_limits(obj, settings)
    return obj


def json_response(content: Any, status_code: int = 200) -> Response:
    return Response(orjson.dumps(content), status_code=status_code, media_type="application/json")


CSV_DESCRIPTION = (
    "Instrument export as CSV. layout=long (default): one row per measurement with a "
    "group column and a value column (named by group_column / value_column, default "
    "'group' and 'value'); layout=wide: one column per group, header = labels, ragged "
    "columns allowed. delimiter: ',', ';', 'tab' or '|' (default: from the header); "
    "decimal_separator: '.' or ','. Other request fields (alpha, method, ...) go in the "
    "query string."
)

ACCEPTS_CSV: dict[str, Any] = {
    "x-accepts-csv": True,
    "requestBody": {
        "content": {"text/csv": {"schema": {"type": "string"}, "example": "group,value\n"
                                 "reference buffer,41.2\nreference buffer,43.8\n"
                                 "HEPES pH 7.5,48.7\nHEPES pH 7.5,50.2\n"}}
    },
    "parameters": [
        {"name": "layout", "in": "query", "required": False,
         "schema": {"type": "string", "enum": ["long", "wide"]}, "description": CSV_DESCRIPTION},
        {"name": "group_column", "in": "query", "required": False, "schema": {"type": "string"},
         "description": "CSV only: name of the group column (long layout)."},
        {"name": "value_column", "in": "query", "required": False, "schema": {"type": "string"},
         "description": "CSV only: name of the value column (long layout)."},
        {"name": "delimiter", "in": "query", "required": False,
         "schema": {"type": "string", "enum": [",", ";", "tab", "|"]},
         "description": "CSV only: field delimiter."},
        {"name": "decimal_separator", "in": "query", "required": False,
         "schema": {"type": "string", "enum": [".", ","]},
         "description": "CSV only: decimal separator of the numbers."},
    ],
}


def one_way_data(groups: Any) -> Any:
    """The validated groups of a request as exactly ingested one-way data."""
    from familywise.stats.data import OneWayData

    return OneWayData.from_decimals([g.label for g in groups], [g.values for g in groups])
