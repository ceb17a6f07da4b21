"""Liveness and readiness."""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse, Response
from pydantic import BaseModel

from familywise.api import metrics

router = APIRouter(tags=["operations"])


class Health(BaseModel):
    status: str


@router.get("/healthz", response_model=Health, summary="The process is alive")
async def healthz() -> JSONResponse:
    return JSONResponse({"status": "ok"})


@router.get(
    "/readyz",
    response_model=Health,
    summary="The service is ready to compute",
    responses={503: {"description": "Still compiling and tabulating the distributions.",
                     "model": Health}},
)
async def readyz(request: Request) -> JSONResponse:
    warm = request.app.state.warm
    if warm.is_set():
        return JSONResponse({"status": "ready"})
    return JSONResponse({"status": "warming up"}, status_code=503)


@router.get(
    "/metrics",
    summary="Prometheus metrics",
    response_class=Response,
    responses={200: {"content": {"text/plain": {"schema": {"type": "string"}}},
                     "description": "Prometheus text exposition format."}},
)
async def metrics_endpoint() -> Response:
    """Request counts and latencies per endpoint and status, computation time per operation."""
    body, media_type = metrics.render()
    return Response(body, media_type=media_type)
