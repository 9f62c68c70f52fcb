"""The FastAPI application factory. No engine or session exists at import time."""

from __future__ import annotations

from collections.abc import AsyncIterator
from contextlib import asynccontextmanager

from fastapi import Depends, FastAPI, Request
from fastapi.exception_handlers import http_exception_handler
from fastapi.exceptions import RequestValidationError
from sqlalchemy.exc import OperationalError
from sqlalchemy.orm import sessionmaker
from starlette.exceptions import HTTPException as StarletteHTTPException
from starlette.routing import Match

from polarsvc import __version__
from polarsvc.aero.errors import AeroError, OutOfRangeError
from polarsvc.api.deps import refuse_control_characters
from polarsvc.api.responses import FormatChoiceError, json_response
from polarsvc.api.settings import Settings
from polarsvc.formats import FormatError
from polarsvc.memory import limit_allocator_retention
from polarsvc.names import TEXT_PATTERN, InvalidText
from polarsvc.store import errors as store_errors
from polarsvc.store.db import is_lock_timeout, make_engine, upgrade_database

CAUTION = (
    "Section tables feed load and energy calculations for machines whose failure can hurt "
    "people. Validate them against measured data; design use follows IEC 61400-1, local "
    "codes and certification practice, under a licensed engineer's judgement."
)

API_PREFIX = "/api/v1"
RETRY_AFTER_S = 1
"""Seconds a client is asked to wait (``Retry-After``) after a 503 for a busy database."""

DESCRIPTION = f"""
A curated store of airfoil section polars with provenance, serving full-range
(-180..180 deg), rotationally augmented and Reynolds/thickness-interpolated tables to rotor
solvers. Every derived table carries its recipe and a content hash (also the ETag).

Tables come as JSON (default), CSV (`format=csv` or `Accept: text/csv`) or a binary form:
Apache Arrow IPC stream (`format=arrow` or `Accept: application/vnd.apache.arrow.stream`;
the response metadata is in the schema metadata `polarsvc.meta`) or a NumPy `.npz` archive
(`format=npz` or `Accept: application/x-npz`). `format=bin` gives Arrow where the server has
pyarrow installed (the `arrow` extra), else `.npz`.

**Caution.** {CAUTION}
"""


def create_app(settings: Settings | None = None) -> FastAPI:
    """Build the application from ``settings`` (default: from the environment)."""
    settings = settings or Settings.from_env()

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        limit_allocator_retention()
        engine = make_engine(settings.database_url)
        if settings.apply_migrations:
            upgrade_database(engine)
        app.state.engine = engine
        app.state.session_factory = sessionmaker(engine, expire_on_commit=False)
        try:
            yield
        finally:
            engine.dispose()

    app = FastAPI(
        title="polarsvc",
        version=__version__,
        description=DESCRIPTION,
        lifespan=lifespan,
        openapi_url=f"{API_PREFIX}/openapi.json",
        docs_url=f"{API_PREFIX}/docs",
        redoc_url=None,
        dependencies=[Depends(refuse_control_characters)],
    )
    app.state.settings = settings
    from polarsvc.web.sessions import WebSessions

    app.state.web_sessions = WebSessions()
    _install_error_handlers(app)
    _declare_text_rule(app)

    from polarsvc.api.routers import admin, blades, catalogue, derived, polars, rotor

    for router in (catalogue.router, polars.router, blades.router, rotor.router,
                   derived.router, admin.router):
        app.include_router(router, prefix=API_PREFIX)

    @app.get(f"{API_PREFIX}/health", tags=["service"])
    def health() -> dict[str, str]:
        """Liveness and version."""
        return {"status": "ok", "version": __version__}

    try:
        from polarsvc.web.pages import install_pages
    except ImportError:  # pages not installed in this build
        pass
    else:
        install_pages(app)
    return app


def create_app_from_env() -> FastAPI:
    """The application with settings from the environment: the factory each worker process
    of ``polarsvc serve --workers N`` calls (``uvicorn --factory``)."""
    return create_app(Settings.from_env())


def _declare_text_rule(app: FastAPI) -> None:
    """Declare in the OpenAPI schema the rule :func:`refuse_control_characters` enforces:
    every string path or query parameter without a pattern of its own gets
    :data:`polarsvc.names.TEXT_PATTERN`."""
    build = app.openapi

    def openapi() -> dict:
        if app.openapi_schema is not None:
            return app.openapi_schema
        schema = build()
        for operations in schema.get("paths", {}).values():
            for operation in operations.values():
                for parameter in operation.get("parameters", ()):
                    declared = parameter.get("schema", {})
                    for variant in declared.get("anyOf", [declared]):
                        if variant.get("type") == "string" and "pattern" not in variant:
                            variant["pattern"] = TEXT_PATTERN
        app.openapi_schema = schema
        return schema

    app.openapi = openapi  # type: ignore[method-assign]


def _detail_response(status: int, detail: object, **extra: object):
    return json_response({"detail": detail, **extra}, status_code=status)


HTTP_METHODS = ("GET", "HEAD", "POST", "PUT", "PATCH", "DELETE", "OPTIONS")


def allowed_methods(app: FastAPI, scope: dict) -> list[str]:
    """Every method some route of ``app`` answers on the request's path (several routes
    may share a path, one per method)."""
    methods: set[str] = set()
    for method in HTTP_METHODS:
        probe = {**scope, "method": method}
        if any(route.matches(probe)[0] == Match.FULL for route in app.router.routes):
            methods.add(method)
    return sorted(methods)


def _install_error_handlers(app: FastAPI) -> None:
    @app.exception_handler(StarletteHTTPException)
    async def http_error(request: Request, exc: StarletteHTTPException):
        if exc.status_code == 405:
            allowed = allowed_methods(app, dict(request.scope))
            if allowed:
                exc.headers = {**(exc.headers or {}), "Allow": ", ".join(allowed)}
        return await http_exception_handler(request, exc)

    @app.exception_handler(FormatError)
    async def format_error(_: Request, exc: FormatError):
        extra = {}
        if getattr(exc, "file", None) is not None:
            extra["file"] = exc.file
        if getattr(exc, "flags", None) is not None:
            extra["quality_flags"] = exc.flags  # a refusal by quality checks
        return _detail_response(
            422, str(exc), line=getattr(exc, "line", None), field=getattr(exc, "field", None),
            **extra,
        )

    @app.exception_handler(OutOfRangeError)
    async def out_of_range(_: Request, exc: OutOfRangeError):
        return _detail_response(422, str(exc), parameter=exc.parameter)

    @app.exception_handler(AeroError)
    async def aero_error(_: Request, exc: AeroError):
        extra = {
            key: getattr(exc, key)
            for key in ("row", "field", "parameter")
            if getattr(exc, key, None) is not None
        }
        return _detail_response(422, str(exc), **extra)

    @app.exception_handler(FormatChoiceError)
    async def format_choice(_: Request, exc: FormatChoiceError):
        return _detail_response(400, str(exc), parameter="format")

    @app.exception_handler(store_errors.NotFound)
    async def not_found(_: Request, exc: store_errors.NotFound):
        return _detail_response(404, str(exc))

    @app.exception_handler(store_errors.Conflict)
    async def conflict(_: Request, exc: store_errors.Conflict):
        return _detail_response(409, str(exc))

    @app.exception_handler(store_errors.InvalidValue)
    async def invalid_value(_: Request, exc: store_errors.InvalidValue):
        return _detail_response(422, str(exc), field=getattr(exc, "field", None))

    @app.exception_handler(InvalidText)
    async def invalid_text(_: Request, exc: InvalidText):
        return _detail_response(422, str(exc), field=exc.field)

    @app.exception_handler(store_errors.InvalidTransition)
    async def invalid_transition(_: Request, exc: store_errors.InvalidTransition):
        return _detail_response(409, str(exc))

    @app.exception_handler(store_errors.IntegrityProblem)
    async def integrity_problem(_: Request, exc: store_errors.IntegrityProblem):
        return _detail_response(500, f"stored data failed its integrity check: {exc}")

    @app.exception_handler(OperationalError)
    async def database_busy(request: Request, exc: OperationalError):
        if not is_lock_timeout(exc):
            raise exc
        return json_response(
            {"detail": "the database is busy with other writes; nothing was changed, "
                       f"retry in {RETRY_AFTER_S} s"},
            status_code=503, headers={"Retry-After": str(RETRY_AFTER_S)},
        )

    @app.exception_handler(RequestValidationError)
    async def validation(_: Request, exc: RequestValidationError):
        # The echoed input may hold NaN or bytes; keep only locations and messages.
        errors = [
            {"loc": [str(part) for part in error.get("loc", ())], "msg": str(error.get("msg"))}
            for error in exc.errors()
        ]
        return _detail_response(422, errors)
