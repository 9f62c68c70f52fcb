"""Sign-in, sign-out and the curator's review forms.

The token typed on the sign-in page is checked with the store's own authentication
(:func:`polarsvc.store.tokens.authenticate_token`) and kept server-side
(:class:`polarsvc.web.sessions.WebSessions`); the cookie holds only the random session id
(HttpOnly, SameSite=Strict, Secure over HTTPS). Review changes go through
:func:`polarsvc.store.polars.set_review_state`, the function behind the API's review endpoint,
which records the audit event in the same transaction.
"""

from __future__ import annotations

from typing import Annotated
from urllib.parse import urlencode

from fastapi import APIRouter, Form, Request
from fastapi.responses import HTMLResponse, RedirectResponse, Response

from polarsvc.api.deps import SESSION_COOKIE
from polarsvc.store import polars as polar_store
from polarsvc.store import tokens as token_store
from polarsvc.store.db import session_scope
from polarsvc.web.routes_read import url_name
from polarsvc.web.security import (
    SIGN_IN_COOKIE,
    PageCurator,
    PageError,
    SessionCSRF,
    SignInCSRF,
    safe_next,
    session_id,
    web_sessions,
)
from polarsvc.web.sessions import SESSION_LIFETIME_S, new_form_token
from polarsvc.web.templating import render

REVIEW_ACTIONS = {"approve": "approved", "deprecate": "deprecated"}
"""Form action -> review state."""

MAX_REASON_LENGTH = 2000
SIGN_IN_FORM_LIFETIME_S = 3600


def _cookie_flags(request: Request) -> dict:
    return {
        "httponly": True,
        "samesite": "strict",
        "secure": request.url.scheme == "https",
        "path": "/",
    }


def _sign_in_form(
    request: Request, next_url: str, message: str | None, status_code: int = 200
) -> Response:
    form_token = new_form_token()
    response = render(
        request,
        "sign_in.html",
        {
            "viewer": None,
            "nav": "",
            "title": "Sign in",
            "form_token": form_token,
            "next_url": safe_next(next_url),
            "message": message,
        },
        status_code=status_code,
    )
    response.set_cookie(
        SIGN_IN_COOKIE, form_token, max_age=SIGN_IN_FORM_LIFETIME_S, **_cookie_flags(request)
    )
    return response


def add_routes(router: APIRouter) -> None:
    @router.get("/sign-in", response_class=HTMLResponse, name="sign-in")
    def sign_in_page(request: Request, next: str = "/") -> Response:
        return _sign_in_form(request, next, None)

    @router.post("/sign-in", dependencies=[SignInCSRF])
    def sign_in(
        request: Request,
        token: Annotated[str, Form()] = "",
        next: Annotated[str, Form()] = "/",
    ) -> Response:
        secret = token.strip()
        with session_scope(request.app.state.session_factory, write=False) as session:
            known = token_store.authenticate_token(session, secret=secret) if secret else None
        if known is None:
            return _sign_in_form(
                request, next, "That token is unknown, expired or revoked.", status_code=401
            )
        sessions = web_sessions(request)
        sessions.end(session_id(request))
        new_id, _ = sessions.create(secret)
        response = RedirectResponse(safe_next(next), status_code=303)
        response.set_cookie(
            SESSION_COOKIE, new_id, max_age=int(SESSION_LIFETIME_S), **_cookie_flags(request)
        )
        response.delete_cookie(SIGN_IN_COOKIE, path="/")
        return response

    @router.post("/sign-out", dependencies=[SessionCSRF])
    def sign_out(request: Request) -> Response:
        web_sessions(request).end(session_id(request))
        response = RedirectResponse("/sign-in", status_code=303)
        response.delete_cookie(SESSION_COOKIE, path="/")
        return response

    @router.post("/airfoils/{name}/review", dependencies=[SessionCSRF])
    def review(
        request: Request,
        name: str,
        viewer: PageCurator,
        revision: Annotated[str, Form()],
        action: Annotated[str, Form()],
        reason: Annotated[str, Form()] = "",
        r_over_R: Annotated[str, Form()] = "",
        chord_over_r: Annotated[str, Form()] = "",
        tip_speed_ratio: Annotated[str, Form()] = "",
        twist_deg: Annotated[str, Form()] = "",
        model: Annotated[str, Form()] = "",
    ) -> Response:
        state = REVIEW_ACTIONS.get(action)
        if state is None:
            raise PageError(422, f"action {action!r} is not one of {', '.join(REVIEW_ACTIONS)}")
        if len(reason) > MAX_REASON_LENGTH:
            raise PageError(422, f"the reason is longer than {MAX_REASON_LENGTH} characters")
        with session_scope(request.app.state.session_factory, write=True) as session:
            changed = polar_store.get_revision(session, revision)
            if changed.airfoil.name != name:
                raise PageError(404, f"revision {revision[:12]} is not a revision of {name!r}")
            polar_store.set_review_state(
                session,
                content_hash=changed.content_hash,
                state=state,
                reason=reason.strip() or None,
                actor=viewer.principal.actor(),
            )
            full_hash = changed.content_hash
        # back to the page as it was: the same revision and station inputs
        station = {
            "r_over_R": r_over_R, "chord_over_r": chord_over_r,
            "tip_speed_ratio": tip_speed_ratio, "twist_deg": twist_deg, "model": model,
        }
        kept = {key: value for key, value in station.items() if value}
        query = urlencode({"revision": full_hash[:16], **kept, "notice": state})
        return RedirectResponse(f"/airfoils/{url_name(name)}?{query}", status_code=303)
