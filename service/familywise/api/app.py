"""The application factory."""

from __future__ import annotations

import asyncio
import logging
import threading
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from importlib import resources

from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.openapi.docs import get_swagger_ui_html
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles
from starlette.exceptions import HTTPException as StarletteHTTPException

from familywise import __version__
from familywise.api.middleware import ProblemCORSMiddleware, RequestContext
from familywise.api.problems import CATALOGUE, ProblemError, validation_problem
from familywise.api.settings import Settings
from familywise.stats.errors import DataError

log = logging.getLogger("familywise")

DESCRIPTION = """\
familywise answers, for a one-way experiment (a plate or batch of treatments,
formulations or conditions, each measured in replicate), the question that
follows the ANOVA: **which groups differ, by how much, and with what
error-rate guarantee**.

Numbers are computed from their decimal text as written. Errors are RFC 9457
problem details (`application/problem+json`) with a JSON pointer to the field
at fault.

*Caution:* familywise supports, and does not replace, a qualified
statistician and the regulations and local procedures that apply to your
work.
"""


def _install_handlers(app: FastAPI) -> None:
    @app.exception_handler(ProblemError)
    async def on_problem(request: Request, exc: ProblemError):
        return exc.response()

    @app.exception_handler(RequestValidationError)
    async def on_validation(request: Request, exc: RequestValidationError):
        return validation_problem(exc.errors(), body=exc.body).response()

    @app.exception_handler(DataError)
    async def on_data(request: Request, exc: DataError):
        return ProblemError("unanalysable-data", exc.message, pointer=exc.pointer, rule=exc.rule).response()

    @app.exception_handler(StarletteHTTPException)
    async def on_http(request: Request, exc: StarletteHTTPException):
        slug = {401: "unauthorized", 404: "not-found", 405: "method-not-allowed",
                406: "not-acceptable", 413: "body-too-large", 415: "unsupported-media-type"}.get(
            exc.status_code)
        if slug is None:
            slug = "invalid-input" if 400 <= exc.status_code < 500 else "internal-error"
        problem = ProblemError(slug, str(exc.detail), headers=dict(exc.headers or {}))
        return problem.response()

    @app.exception_handler(Exception)
    async def on_bug(request: Request, exc: Exception):
        log.exception("unhandled error (a bug) on %s %s", request.method, request.url.path)
        return ProblemError("internal-error", "the service failed on a request it accepted; "
                            "this is a bug, please report it with the request id").response()


def _install_docs(app: FastAPI) -> None:
    assets = resources.files("familywise.api") / "static" / "vendor" / "swagger-ui"
    app.mount("/static/docs", StaticFiles(directory=str(assets)), name="docs-assets")

    @app.get("/docs", include_in_schema=False)
    async def docs() -> HTMLResponse:
        return get_swagger_ui_html(
            openapi_url="/openapi.json",
            title="familywise API",
            swagger_js_url="/static/docs/swagger-ui-bundle.js",
            swagger_css_url="/static/docs/swagger-ui.css",
            swagger_favicon_url="/static/docs/favicon-32x32.png",
        )

    @app.get("/problems/{slug}", include_in_schema=False)
    async def problem_type(slug: str) -> HTMLResponse:
        if slug not in CATALOGUE:
            raise ProblemError("not-found", f"no problem type {slug!r}")
        status, title, description = CATALOGUE[slug]
        return HTMLResponse(f"<h1>{title}</h1><p>HTTP {status}.</p><p>{description}</p>")


def _start_warm_up(app: FastAPI) -> None:
    """Compile and tabulate the distributions in the background; /readyz
    answers 503 until this is done, /healthz at once."""
    warm: threading.Event = app.state.warm
    if not app.state.settings.warm_up or warm.is_set():
        warm.set()
        return

    def run() -> None:
        from familywise import figures
        from familywise.stats.distributions import warm_up

        try:
            warm_up()
            figures.warm_up()
        except Exception:  # pragma: no cover - reported, and readiness never set
            log.exception("warm-up failed")
            return
        warm.set()

    threading.Thread(target=run, name="familywise-warm-up", daemon=True).start()


@asynccontextmanager
async def _lifespan(app: FastAPI) -> AsyncIterator[None]:
    from familywise.api.batch import shutdown_pool

    _start_warm_up(app)
    yield
    await asyncio.to_thread(shutdown_pool)


def _install_openapi(app: FastAPI) -> None:
    """The generated schema, plus the problem-details document every refusal uses."""
    from fastapi.openapi.utils import get_openapi

    from familywise.api.schemas.problem import Problem

    def openapi() -> dict:
        if app.openapi_schema is None:
            schema = get_openapi(title=app.title, version=app.version, description=app.description,
                                 routes=app.routes, license_info=app.license_info)
            problem = Problem.model_json_schema(ref_template="#/components/schemas/{model}")
            components = schema.setdefault("components", {}).setdefault("schemas", {})
            components.update(problem.pop("$defs", {}))
            components["Problem"] = problem
            app.openapi_schema = schema
        return app.openapi_schema

    app.openapi = openapi  # type: ignore[method-assign]


def create_app(settings: Settings | None = None) -> FastAPI:
    """The familywise ASGI application."""
    from familywise.api.routes import ROUTERS

    settings = settings or Settings.from_env()
    app = FastAPI(
        lifespan=_lifespan,
        title="familywise",
        version=__version__,
        description=DESCRIPTION,
        docs_url=None,
        redoc_url=None,
        license_info={"name": "MIT"},
    )
    app.state.settings = settings
    app.state.warm = threading.Event()
    if not settings.warm_up:
        app.state.warm.set()
    _install_handlers(app)
    _install_docs(app)
    for router in ROUTERS:
        app.include_router(router)
    _install_openapi(app)
    endpoints = frozenset(route.path for router in ROUTERS for route in router.routes)
    app.add_middleware(RequestContext, max_bytes=settings.max_body_bytes, api_keys=settings.api_keys,
                       endpoints=endpoints)
    if settings.cors_origins:  # added last: the outermost layer (see ProblemCORSMiddleware)
        app.add_middleware(ProblemCORSMiddleware, allow_origins=list(settings.cors_origins),
                           allow_methods=["GET", "POST"], allow_headers=["authorization", "content-type",
                                                                        "x-request-id"],
                           expose_headers=["x-request-id"])
    return app
