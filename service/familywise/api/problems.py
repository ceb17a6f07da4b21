"""RFC 9457 problem details.

Every refusal is ``application/problem+json`` with ``type`` (a path on this
service that describes the problem), ``title``, ``status``, ``detail``, and,
where a field is at fault, ``pointer`` (RFC 6901) and ``rule``. Validation
failures list every offending field under ``errors``.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

import orjson
from starlette.responses import Response

MEDIA_TYPE = "application/problem+json"

#: slug -> (status, title, description shown at GET /problems/{slug})
CATALOGUE: dict[str, tuple[int, str, str]] = {
    "malformed-body": (400, "Malformed request body",
                       "The body is not valid JSON or CSV, repeats a key, nests too deeply, or "
                       "uses a NaN or Infinity literal."),
    "cors-refused": (400, "Cross-origin request not allowed",
                     "A browser's preflight from an origin, or for a method or header, that the service "
                     "is not configured to allow (FAMILYWISE_CORS_ORIGINS)."),
    "unauthorized": (401, "Missing or invalid API key",
                     "Send 'Authorization: Bearer <key>' with a key configured on the service."),
    "not-found": (404, "Not found", "No resource at this path."),
    "method-not-allowed": (405, "Method not allowed", "This path does not take that method."),
    "not-acceptable": (406, "Not acceptable", "The service cannot produce the requested media type."),
    "body-too-large": (413, "Request body too large",
                       "The body exceeds FAMILYWISE_MAX_BODY_BYTES."),
    "unsupported-media-type": (415, "Unsupported media type",
                               "Send application/json (or text/csv where the endpoint says so)."),
    "invalid-input": (422, "Invalid input",
                      "A field breaks a rule of the request schema; see errors[]."),
    "limit-exceeded": (422, "Configured limit exceeded",
                       "The request asks for more groups, values, contrasts or batch items than "
                       "the service is configured to accept."),
    "unanalysable-data": (422, "The data cannot be analysed this way",
                          "The numbers are well-formed but the method is undefined for them "
                          "(for example zero within-group variance)."),
    "computation-busy": (503, "Too many long computations in progress",
                         "This server worker is already running its share of long computations; the "
                         "request was not started. Retry after the time Retry-After gives."),
    "computation-timeout": (503, "Computation took too long",
                            "The computation exceeded FAMILYWISE_COMPUTE_TIMEOUT_SECONDS; retry "
                            "later or split the request."),
    "internal-error": (500, "Internal error",
                       "A bug: the service failed to answer a request it accepted."),
}


@dataclass
class ProblemError(Exception):
    """Raise anywhere in the API layer to answer with a problem document."""

    slug: str
    detail: str
    pointer: str | None = None
    rule: str | None = None
    errors: list[dict[str, Any]] = field(default_factory=list)
    headers: dict[str, str] = field(default_factory=dict)
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def status(self) -> int:
        return CATALOGUE[self.slug][0]

    def document(self) -> dict[str, Any]:
        status, title, _ = CATALOGUE[self.slug]
        body: dict[str, Any] = {
            "type": f"/problems/{self.slug}",
            "title": title,
            "status": status,
            "detail": self.detail,
        }
        if self.pointer is not None:
            body["pointer"] = self.pointer
        if self.rule is not None:
            body["rule"] = self.rule
        if self.errors:
            body["errors"] = self.errors
        body.update(self.extra)
        return body

    def response(self) -> Response:
        return problem_response(self.document(), self.status, self.headers)


def problem_response(
    document: dict[str, Any], status: int, headers: dict[str, str] | None = None
) -> Response:
    return Response(
        orjson.dumps(document), status_code=status, media_type=MEDIA_TYPE, headers=headers
    )


def pointer_from_location(location: tuple[Any, ...] | list[Any]) -> str:
    """JSON pointer (RFC 6901) from a pydantic error location."""
    parts = [str(p).replace("~", "~0").replace("/", "~1") for p in location]
    return "/" + "/".join(parts) if parts else ""


_MISSING = object()


def _child(node: Any, key: Any) -> Any:
    if isinstance(node, dict):
        return node.get(key, _MISSING)
    if isinstance(node, list) and isinstance(key, int) and 0 <= key < len(node):
        return node[key]
    return _MISSING


_FUNCTION_TAG = re.compile(r"^function-(plain|before|after|wrap)\[.*\]$")


def _union_member_step(location: list[Any], body: Any) -> tuple[int, Any] | None:
    """Where pydantic put the name of a union's member in an error location
    ("function-plain[_number()]", "RelativeMargin": a step that names nothing
    in the body), with the value the caller sent there; None if no such step.

    A step absent from the body is a member's name when the value there is
    not an object (it has no keys), when more steps follow it, or when it has
    the form of pydantic's name for a validator function; a last step absent
    from an object is that object's missing (or defaulted) field.
    """
    node = body
    for position, key in enumerate(location):
        child = _child(node, key)
        if child is _MISSING:
            if not isinstance(key, str):
                return None
            last = position == len(location) - 1
            if not isinstance(node, dict) or not last or _FUNCTION_TAG.match(key):
                return position, node
            return None
        node = child
    return None


#: pydantic's error types for "this member wanted an object"
_OBJECT_EXPECTED = {"model_type", "dict_type", "model_attributes_type"}


def validation_problem(errors: list[dict[str, Any]], prefix: str = "", body: Any = _MISSING) -> ProblemError:
    """The 422 problem for pydantic validation errors, one entry per field,
    pointers relative to the request body (``prefix`` for a nested request).

    Given the ``body``, the pointers of a union field (a number or an object)
    leave out pydantic's member names, and only the errors of the member that
    fits what was sent are kept: the object member's for an object, the
    other's for anything else.
    """
    from familywise.api.schemas.common import ItemError

    entries = []
    for err in errors:
        location = list(err.get("loc", ()))
        in_body = not location or location[0] not in ("query", "path", "header", "cookie")
        if location and location[0] == "body":
            location = location[1:]
        error_type = err.get("type", "invalid")
        step = _union_member_step(location, body) if in_body and isinstance(body, dict) else None
        if step is not None:
            position, sent = step
            from_object_member = position < len(location) - 1 or error_type in _OBJECT_EXPECTED
            if from_object_member != isinstance(sent, dict):
                continue
            del location[position]
        cause = (err.get("ctx") or {}).get("error")
        if isinstance(cause, ItemError):
            location.append(cause.index)
            message = str(cause)
        else:
            message = err.get("msg", "invalid value")
        entries.append({"pointer": prefix + pointer_from_location(location), "rule": error_type,
                        "detail": message})
    first = entries[0] if entries else {"pointer": prefix, "rule": "invalid", "detail": "invalid request"}
    detail = f"{first['pointer'] or 'the body'}: {first['detail']}"
    if len(entries) > 1:
        detail += f" (and {len(entries) - 1} more)"
    return ProblemError("invalid-input", detail, pointer=first["pointer"], rule=first["rule"], errors=entries)
