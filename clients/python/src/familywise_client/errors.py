"""The client's one exception type.

Every answer that is not a success, whatever its status, raises
:class:`FamilywiseError` carrying the service's problem document (RFC 9457):
``status``, ``title``, ``detail``, the JSON ``pointer`` to the field at fault,
the ``rule`` it breaks, every offending field in ``errors``, and the
``problem_type`` URI. When no answer arrives at all (connection refused,
timeouts, a dropped connection), after the retries,
:class:`FamilywiseConnectionError` is raised: a subclass, so one
``except FamilywiseError`` catches both, with ``status`` None.
"""

from __future__ import annotations

import json
from typing import Any

import httpx
from pydantic import ValidationError

from familywise_client.models import FieldError

__all__ = ["FamilywiseConnectionError", "FamilywiseError"]

PROBLEM_MEDIA_TYPE = "application/problem+json"


class FamilywiseError(Exception):
    """A refusal or failure of the familywise service, as its problem document describes it.

    Attributes: ``status`` (HTTP status; None for :class:`FamilywiseConnectionError`),
    ``title``, ``detail``, ``pointer`` (RFC 6901 pointer into the request body, or None),
    ``rule``, ``errors`` (list of :class:`~familywise_client.models.FieldError`),
    ``problem_type`` (the document's ``type``), ``problem`` (the raw document, a dict),
    ``request_id`` (the X-Request-ID of the exchange) and ``response`` (the
    :class:`httpx.Response`, or None).
    """

    def __init__(
        self,
        *,
        status: int | None,
        title: str,
        detail: str,
        pointer: str | None = None,
        rule: str | None = None,
        errors: list[FieldError] | None = None,
        problem_type: str = "about:blank",
        problem: dict[str, Any] | None = None,
        request_id: str | None = None,
        response: httpx.Response | None = None,
    ) -> None:
        super().__init__(title, detail)
        self.status = status
        self.title = title
        self.detail = detail
        self.pointer = pointer
        self.rule = rule
        self.errors = errors or []
        self.problem_type = problem_type
        self.problem = problem if problem is not None else {}
        self.request_id = request_id
        self.response = response

    def __reduce__(self) -> tuple[Any, ...]:
        # keyword-only construction: rebuild from the attributes (pickling, e.g. across processes),
        # leaving out the live response
        return _rebuild, (type(self), {**self.__dict__, "response": None}, self.args)

    def __str__(self) -> str:
        where = f" (at {self.pointer}, rule {self.rule})" if self.pointer else ""
        status = f"{self.status} " if self.status is not None else ""
        return f"{status}{self.title}: {self.detail}{where}"

    @classmethod
    def from_response(cls, response: httpx.Response) -> FamilywiseError:
        """The error for an unsuccessful answer: its problem document, or what can be said without one."""
        request_id = response.headers.get("x-request-id")
        document = _problem_document(response)
        if document is None:
            text = response.text.strip()
            return cls(status=response.status_code, title=response.reason_phrase or "HTTP error",
                       detail=text[:500] or f"HTTP {response.status_code} without a problem document",
                       request_id=request_id, response=response)
        errors = []
        for entry in document.get("errors") or []:
            try:
                errors.append(FieldError.model_validate(entry))
            except ValidationError:
                continue
        status = document.get("status")
        return cls(
            status=status if isinstance(status, int) and not isinstance(status, bool) else response.status_code,
            title=str(document.get("title") or response.reason_phrase or "HTTP error"),
            detail=str(document.get("detail") or ""),
            pointer=document.get("pointer"),
            rule=document.get("rule"),
            errors=errors,
            problem_type=str(document.get("type") or "about:blank"),
            problem=document,
            request_id=request_id,
            response=response,
        )


class FamilywiseConnectionError(FamilywiseError):
    """No answer from the service after every attempt: refused or dropped connections, timeouts.

    ``status`` is None; ``attempts`` says how many were made, and the last
    transport error is the ``__cause__``.
    """

    def __init__(self, error: Exception, attempts: int, request_id: str | None = None) -> None:
        timed_out = isinstance(error, httpx.TimeoutException)
        super().__init__(
            status=None,
            title="No answer in time" if timed_out else "Service unreachable",
            detail=f"{type(error).__name__}: {error or 'no detail'} ({attempts} attempt{'s' if attempts > 1 else ''})",
            request_id=request_id,
        )
        self.attempts = attempts


def _rebuild(cls: type[FamilywiseError], state: dict[str, Any], args: tuple[Any, ...]) -> FamilywiseError:
    error = cls.__new__(cls)
    error.args = args
    error.__dict__.update(state)
    return error


def _problem_document(response: httpx.Response) -> dict[str, Any] | None:
    media_type = response.headers.get("content-type", "").split(";")[0].strip().lower()
    if media_type not in (PROBLEM_MEDIA_TYPE, "application/json"):
        return None
    try:
        document = json.loads(response.content)
    except ValueError:
        return None
    if not isinstance(document, dict) or not ("title" in document or "type" in document):
        return None
    return document
