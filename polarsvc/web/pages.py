"""The curation pages: catalogue, airfoil, family, blade, lineage and audit pages, sign-in,
curator review forms, and the plot and CSV downloads behind every figure.

:func:`install_pages` adds them to the application (no ``/api`` prefix) and mounts the
static files. Reading follows the API's read rule; without a token the browser is sent to the
sign-in page. Every form carries a CSRF token.
"""

from __future__ import annotations

from collections.abc import Callable, Coroutine
from typing import Any

from fastapi import APIRouter, FastAPI, Request
from fastapi.responses import RedirectResponse, Response
from fastapi.routing import APIRoute
from fastapi.staticfiles import StaticFiles

from polarsvc.aero import AeroError
from polarsvc.store import errors as store_errors
from polarsvc.web import routes_auth, routes_plots, routes_read
from polarsvc.web.security import PageError, SignInNeededError
from polarsvc.web.templating import STATIC_DIR, render
from polarsvc.web.viewdata import PageInputError


class PageRoute(APIRoute):
    """A route whose storage and input errors become the HTML error page (the API's JSON
    error handlers stay as they are for the API)."""

    def get_route_handler(self) -> Callable[[Request], Coroutine[Any, Any, Response]]:
        handler = super().get_route_handler()

        async def page_handler(request: Request) -> Response:
            try:
                return await handler(request)
            except store_errors.NotFound as exc:
                raise PageError(404, str(exc)) from None
            except (store_errors.InvalidTransition, store_errors.Conflict) as exc:
                raise PageError(409, str(exc)) from None
            except (store_errors.InvalidValue, PageInputError, AeroError) as exc:
                raise PageError(422, str(exc)) from None

        return page_handler


_TITLES = {
    400: "Bad request",
    401: "Sign-in needed",
    403: "Not allowed",
    404: "Not found",
    409: "Refused",
    422: "Cannot use this input",
}


def _page_error(request: Request, exc: Exception) -> Response:
    assert isinstance(exc, PageError)
    return render(
        request,
        "error.html",
        {
            "viewer": None,
            "nav": "",
            "title": _TITLES.get(exc.status_code, "Error"),
            "message": exc.message,
            "back_url": "/",
        },
        status_code=exc.status_code,
    )


def _sign_in_redirect(request: Request, exc: Exception) -> Response:
    assert isinstance(exc, SignInNeededError)
    return RedirectResponse(exc.next_url, status_code=303)


def build_router() -> APIRouter:
    """All page routes in one router."""
    router = APIRouter(route_class=PageRoute, include_in_schema=False)
    routes_read.add_routes(router)
    routes_plots.add_routes(router)
    routes_auth.add_routes(router)
    return router


def install_pages(app: FastAPI) -> None:
    """Add the pages, their error handling and the static files to ``app``."""
    app.include_router(build_router())
    app.add_exception_handler(PageError, _page_error)
    app.add_exception_handler(SignInNeededError, _sign_in_redirect)
    app.mount("/static", StaticFiles(directory=STATIC_DIR), name="web-static")
