"""Liveness and readiness."""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse
from pydantic import BaseModel

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
