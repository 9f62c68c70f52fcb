"""Access rules of the pages: the API's read rule with a sign-in redirect, the cookie
session, and the CSRF checks on every form.

Reading pages use the API's own dependency (:func:`polarsvc.api.deps.require_role`, with the
session cookie accepted, which the API itself ignores); when it
answers 401 the browser is sent to the sign-in page instead of a JSON error. The session cookie
holds only a random id (:class:`polarsvc.web.sessions.WebSessions`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Annotated
from urllib.parse import quote

from fastapi import Depends, Form, HTTPException, Request

from polarsvc.api.deps import ROLE_RANK, SESSION_COOKIE, Principal, require_role
from polarsvc.api.visibility import sees_identities
from polarsvc.web.sessions import WebSessions, tokens_match

SIGN_IN_COOKIE = "polarsvc_sign_in"
"""Double-submit cookie of the sign-in form (the form is shown before any session exists)."""

CSRF_FIELD = "csrf_token"


class SignInNeededError(Exception):
    """The page needs a token: answered with a redirect to the sign-in page."""

    def __init__(self, next_url: str):
        self.next_url = next_url
        super().__init__(next_url)


class PageError(Exception):
    """A page-level failure answered with the HTML error page and ``status_code``."""

    def __init__(self, status_code: int, message: str):
        self.status_code = status_code
        self.message = message
        super().__init__(message)


def web_sessions(request: Request) -> WebSessions:
    return request.app.state.web_sessions


def session_id(request: Request) -> str | None:
    return request.cookies.get(SESSION_COOKIE)


def safe_next(url: str | None) -> str:
    """A same-site path to return to after sign-in: only ``/...`` (not ``//host``)."""
    if not url or not url.startswith("/") or url.startswith("//") or "\\" in url:
        return "/"
    return url


def sign_in_url(request: Request) -> str:
    path = request.url.path
    if request.url.query:
        path = f"{path}?{request.url.query}"
    return "/sign-in?next=" + quote(path, safe="/")


def _page_role(minimum: str):
    check = require_role(minimum, cookie=True)

    def dependency(request: Request) -> Principal:
        try:
            return check(request)
        except HTTPException as exc:
            if exc.status_code == 401:
                raise SignInNeededError(sign_in_url(request)) from None
            raise PageError(exc.status_code, str(exc.detail)) from None

    return dependency


@dataclass(frozen=True)
class Viewer:
    """Who looks at a page, and the CSRF token of their session (None when anonymous)."""

    principal: Principal
    csrf_token: str | None

    @property
    def signed_in(self) -> bool:
        return self.csrf_token is not None

    @property
    def sees_identities(self) -> bool:
        """Whether token names and client addresses are shown (:mod:`polarsvc.api.visibility`)."""
        return sees_identities(self.principal)

    @property
    def is_curator(self) -> bool:
        return ROLE_RANK[self.principal.role] >= ROLE_RANK["curator"]


_reader = _page_role("reader")
_curator = _page_role("curator")


def page_reader(request: Request) -> Viewer:
    principal = _reader(request)
    return Viewer(principal, web_sessions(request).csrf_for(session_id(request)))


def page_curator(request: Request) -> Viewer:
    principal = _curator(request)
    return Viewer(principal, web_sessions(request).csrf_for(session_id(request)))


def check_session_csrf(
    request: Request, csrf_token: Annotated[str | None, Form()] = None
) -> None:
    """Refuse (403) a form post whose CSRF field is not the session's token."""
    if not web_sessions(request).check_csrf(session_id(request), csrf_token):
        raise PageError(403, "the form's CSRF token is missing or wrong; reload the page")


def check_sign_in_csrf(
    request: Request, csrf_token: Annotated[str | None, Form()] = None
) -> None:
    """Refuse (403) a sign-in post whose field does not match its double-submit cookie."""
    if not tokens_match(request.cookies.get(SIGN_IN_COOKIE), csrf_token):
        raise PageError(403, "the sign-in form's CSRF token is missing or wrong; reload the page")


PageReader = Annotated[Viewer, Depends(page_reader)]
PageCurator = Annotated[Viewer, Depends(page_curator)]
SessionCSRF = Depends(check_session_csrf)
SignInCSRF = Depends(check_sign_in_csrf)
