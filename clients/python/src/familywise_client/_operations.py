"""The endpoints, listed once for both clients.

Each endpoint is an :class:`Operation` descriptor on :class:`Operations`, the
base of :class:`~familywise_client.Client` and
:class:`~familywise_client.AsyncClient`. Read from a client, it is a method:
it builds the request model from a model, a mapping or keyword arguments,
writes the JSON body with exact numbers, and hands the call to the client,
which sends it (blocking, or as a coroutine) and returns the response model.
"""

from __future__ import annotations

import json
from collections.abc import Awaitable, Callable, Iterable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Generic, Literal, Protocol, TypeVar, overload

import httpx
from pydantic import BaseModel, ValidationError

from familywise_client import models
from familywise_client._json import dumps
from familywise_client._types import RequestModel
from familywise_client.errors import FamilywiseError

if TYPE_CHECKING:
    from familywise_client.client import AsyncClient, Client

RequestT = TypeVar("RequestT")
ResultT = TypeVar("ResultT")
Request_contra = TypeVar("Request_contra", contravariant=True)
Result_co = TypeVar("Result_co", covariant=True)

ImageFormat = Literal["svg", "png"]
IMAGE_MEDIA_TYPES: dict[str, str] = {"svg": "image/svg+xml", "png": "image/png"}
JSON_ACCEPT = "application/json, application/problem+json"

#: A batch item: a BatchItem, an (id, operation, request) triple, or a mapping with those keys.
BatchItemInput = models.BatchItem | tuple[str, str, RequestModel | Mapping[str, Any]] | Mapping[str, Any]


class Call(Protocol[Request_contra, Result_co]):
    """An endpoint method: a request model or mapping, or keyword fields (or both: fields win)."""

    def __call__(self, request: Request_contra | Mapping[str, Any] | None = None, /, *,
                 request_id: str | None = None, **fields: Any) -> Result_co: ...


class FigureCall(Protocol[Request_contra, Result_co]):
    """A figure method: as :class:`Call`, plus the picture's format."""

    def __call__(self, request: Request_contra | Mapping[str, Any] | None = None, /, *,
                 image_format: ImageFormat = "svg", request_id: str | None = None, **fields: Any) -> Result_co: ...


@dataclass(frozen=True, slots=True)
class Prepared:
    """A call ready to send: path, body, Accept header, and how to read a success."""

    path: str
    body: bytes
    accept: str
    read: Callable[[httpx.Response], Any]


def with_group_list(data: dict[str, Any]) -> dict[str, Any]:
    """``groups`` given as a mapping label -> values becomes the list of {label, values} the API takes."""
    groups = data.get("groups")
    if isinstance(groups, Mapping):
        data["groups"] = [{"label": label, "values": list(values)} for label, values in groups.items()]
    return data


def request_body(model: RequestModel) -> bytes:
    """JSON of the fields that were set (the service fills in its defaults), numbers exact."""
    return dumps(model.model_dump(mode="python", by_alias=True, exclude_unset=True))


class Operation(Generic[RequestT, ResultT]):
    """POST ``path`` with a ``request_model`` body, answered by ``response_model``."""

    def __init__(self, path: str, request_model: type[RequestT], response_model: type[ResultT], summary: str) -> None:
        self.path = path
        self.request_model: type[RequestModel] = request_model  # type: ignore[assignment]
        self.response_model: type[BaseModel] | None = response_model  # type: ignore[assignment]
        self.summary = summary
        self.name = ""

    def __set_name__(self, owner: type, name: str) -> None:
        self.name = name
        answer = self.response_model.__name__ if self.response_model else "bytes"
        self.__doc__ = (f"{self.summary}\n\nPOST {self.path}; request {self.request_model.__name__} (or a mapping, "
                        f"or keyword fields), returns {answer}; raises FamilywiseError.")

    @overload
    def __get__(self, client: None, owner: type | None = None) -> Operation[RequestT, ResultT]: ...
    @overload
    def __get__(self, client: AsyncClient, owner: type | None = None) -> Call[RequestT, Awaitable[ResultT]]: ...
    @overload
    def __get__(self, client: Client, owner: type | None = None) -> Call[RequestT, ResultT]: ...

    def __get__(self, client: Any, owner: type | None = None) -> Any:
        return self if client is None else Bound(self, client)

    def __repr__(self) -> str:
        return f"<familywise operation {self.name}: POST {self.path}>"

    def build(self, request: Any, fields: dict[str, Any]) -> RequestModel:
        """The request model from a model, a mapping, keyword fields, or a mapping or model plus fields."""
        model = self.request_model
        if isinstance(request, model) and not fields:
            return request
        if isinstance(request, BaseModel):
            if not isinstance(request, model):
                raise TypeError(f"{self.name}() takes a {model.__name__}, not a {type(request).__name__}")
            data = request.model_dump(mode="python", by_alias=True, exclude_unset=True)
        elif isinstance(request, Mapping):
            data = dict(request)
        elif request is None:
            if not fields:
                raise TypeError(f"{self.name}() needs a {model.__name__}, a mapping or keyword fields")
            data = {}
        else:
            raise TypeError(f"{self.name}() takes a {model.__name__} or a mapping, not a {type(request).__name__}")
        return model.model_validate(with_group_list({**data, **fields}))

    def prepare(self, request: Any = None, /, **fields: Any) -> Prepared:
        return Prepared(self.path, request_body(self.build(request, fields)), JSON_ACCEPT, self.read)

    def read(self, response: httpx.Response) -> Any:
        assert self.response_model is not None
        try:
            return self.response_model.model_validate(json.loads(response.content))
        except (ValueError, ValidationError) as error:
            raise FamilywiseError(
                status=response.status_code, title="Answer not understood",
                detail=f"the {self.name} answer does not match {self.response_model.__name__}: {error}",
                request_id=response.headers.get("x-request-id"), response=response) from error


class FigureOperation(Operation[RequestT, bytes]):
    """A figure endpoint: the picture's bytes, SVG or PNG by ``image_format``."""

    def __init__(self, path: str, request_model: type[RequestT], summary: str) -> None:
        super().__init__(path, request_model, bytes, summary)
        self.response_model = None

    @overload
    def __get__(self, client: None, owner: type | None = None) -> FigureOperation[RequestT]: ...
    @overload
    def __get__(self, client: AsyncClient, owner: type | None = None) -> FigureCall[RequestT, Awaitable[bytes]]: ...
    @overload
    def __get__(self, client: Client, owner: type | None = None) -> FigureCall[RequestT, bytes]: ...

    def __get__(self, client: Any, owner: type | None = None) -> Any:
        return self if client is None else Bound(self, client)

    def prepare(self, request: Any = None, /, *, image_format: ImageFormat = "svg", **fields: Any) -> Prepared:
        if image_format not in IMAGE_MEDIA_TYPES:
            raise ValueError(f"image_format must be 'svg' or 'png', not {image_format!r}")
        media_type = IMAGE_MEDIA_TYPES[image_format]

        def read(response: httpx.Response) -> bytes:
            answered = response.headers.get("content-type", "").split(";")[0].strip().lower()
            if answered != media_type:
                raise FamilywiseError(status=response.status_code, title="Answer not understood",
                                      detail=f"asked for {media_type}, received {answered or 'no content type'}",
                                      request_id=response.headers.get("x-request-id"), response=response)
            return response.content

        return Prepared(self.path, request_body(self.build(request, fields)), media_type, read)


class BatchOperation(Operation[models.BatchRequest | Iterable[BatchItemInput], models.BatchResponse]):
    """POST /v1/batch: items as BatchItem models, (id, operation, request) triples or mappings.

    An item's request may be that operation's request model or a mapping
    (``groups`` may be a mapping label -> values). Mappings are sent as given,
    not checked here, so that a bad item is answered by its own problem while
    the others are computed. The results' ``result`` stay plain dicts (each
    operation's answer without its provenance).
    """

    def build(self, request: Any, fields: dict[str, Any]) -> RequestModel:
        if isinstance(request, models.BatchRequest) and not fields:
            return request
        if isinstance(request, Mapping) and not fields:
            request, fields = None, dict(request)
        if request is not None:
            fields = {"items": request, **fields}
        if set(fields) != {"items"}:
            raise TypeError("batch() takes the items, as its argument or as items=")
        return models.BatchRequest(items=[_batch_item(item) for item in fields["items"]])


def _batch_item(item: Any) -> models.BatchItem:
    if isinstance(item, models.BatchItem):
        return item
    if isinstance(item, Mapping):
        item_id, operation, request = item.get("id"), item.get("operation"), item.get("request")
    elif isinstance(item, tuple) and len(item) == 3:
        item_id, operation, request = item
    else:
        raise TypeError(f"a batch item is a BatchItem, an (id, operation, request) triple or a mapping, not {item!r}")
    if isinstance(request, BaseModel):
        request = request.model_dump(mode="python", by_alias=True, exclude_unset=True)
    elif isinstance(request, Mapping):
        request = with_group_list(dict(request))
    return models.BatchItem.model_validate({"id": item_id, "operation": operation, "request": request})


class Bound:
    """An operation read from a client: calling it prepares the request and lets the client send it."""

    def __init__(self, operation: Operation[Any, Any], client: Any) -> None:
        self.operation = operation
        self.client = client
        self.__doc__ = operation.__doc__
        self.__name__ = operation.name

    def __call__(self, request: Any = None, /, *, request_id: str | None = None, **fields: Any) -> Any:
        return self.client._send_prepared(self.operation.prepare(request, **fields), request_id)

    def __repr__(self) -> str:
        return f"<bound familywise operation {self.operation.name} of {self.client!r}>"


class Operations:
    """The familywise endpoints; one method each on Client and AsyncClient."""

    omnibus = Operation(
        "/v1/omnibus", models.OmnibusRequest, models.OmnibusResponse,
        "Group summaries, ANOVA table, Welch, Brown-Forsythe, Kruskal-Wallis, diagnostics and effect sizes.")
    pairwise = Operation(
        "/v1/followup/pairwise", models.PairwiseRequest, models.FamilyResponse,
        "All pairs of groups, with the compact letters.")
    control = Operation(
        "/v1/followup/control", models.ControlRequest, models.FamilyResponse,
        "Each group against a control.")
    best = Operation(
        "/v1/followup/best", models.BestRequest, models.FamilyResponse,
        "Each group against the best of the others (Hsu's MCB).")
    contrasts = Operation(
        "/v1/followup/contrasts", models.ContrastsRequest, models.FamilyResponse,
        "Planned or post-hoc contrasts.")
    equivalence = Operation(
        "/v1/followup/equivalence", models.EquivalenceRequest, models.FamilyResponse,
        "Each candidate against a reference within a margin: equivalence, non-inferiority, non-superiority.")
    validate_contrasts = Operation(
        "/v1/contrasts/validate", models.ContrastValidationRequest, models.ContrastValidationResponse,
        "Whether planned contrasts are valid and orthogonal for the group sizes obtained.")
    recommendation = Operation(
        "/v1/recommendation", models.RecommendationRequest, models.RecommendationResponse,
        "Which follow-up family and method fit the question (and the data, when given).")
    analysis = Operation(
        "/v1/analysis", models.AnalysisRequest, models.AnalysisResponse,
        "Omnibus, recommendation, the recommended (or requested) follow-up and a short report in one call.")
    plan = Operation(
        "/v1/plan", models.PlanRequest, models.PlanResponse,
        "Sample size or power for the omnibus test or a follow-up family.")
    batch = BatchOperation(
        "/v1/batch", models.BatchRequest, models.BatchResponse,
        "Many independent analyses in one call; each item has its own result or problem.")
    figure_means = FigureOperation(
        "/v1/figures/means", models.MeansFigureRequest,
        "Picture of the group means with their intervals and compact letters (SVG or PNG bytes).")
    figure_differences = FigureOperation(
        "/v1/figures/differences", models.DifferencesFigureRequest,
        "Picture of a follow-up family's intervals against zero (SVG or PNG bytes).")


#: Every operation by method name.
OPERATIONS: dict[str, Operation[Any, Any]] = {
    name: value for name, value in vars(Operations).items() if isinstance(value, Operation)}
