"""Pure ASGI middleware: request id, body size limit, access log.

Written against the ASGI interface rather than Starlette's BaseHTTPMiddleware
so that they add microseconds, not a task per request.
"""

from __future__ import annotations

import json
import logging
import re
import time
import uuid
from typing import Any

from familywise.api.problems import ProblemError

Scope = dict[str, Any]
ASGIApp = Any

REQUEST_ID_HEADER = b"x-request-id"
_SAFE_ID = re.compile(r"^[A-Za-z0-9._:-]{1,128}$")

access_log = logging.getLogger("familywise.access")


class RequestContext:
    """One pure ASGI layer for every request: accept or create a request id
    and echo it; answer 413 when the declared or streamed body exceeds
    ``max_bytes``; write one JSON access-log line (method, path, status,
    duration; never the body)."""

    def __init__(self, app: ASGIApp, max_bytes: int) -> None:
        self.app = app
        self.max_bytes = max_bytes

    async def __call__(self, scope: Scope, receive: Any, send: Any) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        request_id = None
        declared = 0
        for name, value in scope["headers"]:
            if name == REQUEST_ID_HEADER:
                text = value.decode("latin-1")
                if _SAFE_ID.match(text):
                    request_id = text
            elif name == b"content-length":
                try:
                    declared = int(value)
                except ValueError:
                    declared = 0
        if request_id is None:
            request_id = uuid.uuid4().hex
        scope.setdefault("state", {})["request_id"] = request_id
        started = time.perf_counter()
        status = 500
        id_header = (REQUEST_ID_HEADER, request_id.encode("latin-1"))

        async def send_with_id(message: dict[str, Any]) -> None:
            nonlocal status
            if message["type"] == "http.response.start":
                status = message["status"]
                message["headers"] = [*message.get("headers", []), id_header]
            await send(message)

        received = 0

        async def limited_receive() -> dict[str, Any]:
            nonlocal received
            message = await receive()
            if message["type"] == "http.request":
                received += len(message.get("body", b""))
                if received > self.max_bytes:
                    raise _TooLarge()
            return message

        try:
            if declared > self.max_bytes:
                await self._refuse(scope, send_with_id, declared)
            else:
                try:
                    await self.app(scope, limited_receive, send_with_id)
                except _TooLarge:
                    await self._refuse(scope, send_with_id, received)
        finally:
            if access_log.isEnabledFor(logging.INFO):
                access_log.info(json.dumps({
                    "event": "request",
                    "request_id": request_id,
                    "method": scope.get("method"),
                    "path": scope.get("path"),
                    "status": status,
                    "duration_ms": round((time.perf_counter() - started) * 1e3, 3),
                }))

    async def _refuse(self, scope: Scope, send: Any, size: int) -> None:
        problem = ProblemError(
            "body-too-large",
            f"the body ({size} bytes or more) exceeds the limit of {self.max_bytes} bytes "
            "(FAMILYWISE_MAX_BODY_BYTES)",
            rule="max_body_bytes",
        )
        await problem.response()(scope, _drain, send)


class _TooLarge(Exception):
    pass


async def _drain() -> dict[str, Any]:
    return {"type": "http.disconnect"}
