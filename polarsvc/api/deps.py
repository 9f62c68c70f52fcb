"""Request dependencies: database sessions and the authenticated principal.

Roles are ordered reader < curator < admin. The API takes a token only as
``Authorization: Bearer <secret>``. The HttpOnly session cookie set by the sign-in page is
honoured by the pages alone (:func:`require_role` with ``cookie=True``), whose every form
carries a CSRF token: a browser attaches the cookie to any request, also one a foreign site
makes it send, so an API that honoured the cookie would accept forged writes. Scripts have
their bearer token; the pages need no API call. Reads need a reader token unless the server
runs with public reads turned on.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from typing import Annotated

from fastapi import Depends, HTTPException, Request
from sqlalchemy.orm import Session
from starlette.concurrency import run_in_threadpool

from polarsvc.api.settings import Settings
from polarsvc.names import find_control
from polarsvc.store import tokens as token_store
from polarsvc.store.audit import Actor
from polarsvc.store.db import session_scope
from polarsvc.store.errors import InvalidValue

ROLE_RANK = {"public": 0, "reader": 1, "curator": 2, "admin": 3}
SESSION_COOKIE = "polarsvc_session"


@dataclass(frozen=True)
class Principal:
    """Who is asking: the token's name and role (``public`` for anonymous public reads)."""

    name: str
    role: str
    remote_addr: str | None

    def actor(self) -> Actor:
        """The audit trail's record of this principal."""
        return Actor(name=self.name, role=self.role, remote_addr=self.remote_addr)


async def refuse_control_characters(request: Request) -> None:
    """Refuse (422, naming the parameter) a path or query parameter holding a control
    character other than tab and line ends (:func:`polarsvc.names.check_text`). Applied to
    every route, API and pages, so both databases see the same text (PostgreSQL cannot
    store NUL). A short scan of the address: it runs on the event loop, sparing every
    request a trip through the worker threads."""
    items = [*request.path_params.items(), *request.query_params.multi_items()]
    for name, value in items:
        for field, text in ((name, name), (name, value)):
            if isinstance(text, str) and (problem := find_control(text)) is not None:
                raise InvalidValue(field, problem)


def get_settings(request: Request) -> Settings:
    return request.app.state.settings


def read_session(request: Request) -> Iterator[Session]:
    """A session for reading; committed at the end (derived-table cache writes use their own
    write transaction)."""
    with session_scope(request.app.state.session_factory, write=False) as session:
        yield session


SettingsDep = Annotated[Settings, Depends(get_settings)]
ReadSession = Annotated[Session, Depends(read_session)]


def _secret(request: Request, *, cookie: bool) -> str | None:
    header = request.headers.get("authorization")
    if header:
        scheme, _, value = header.partition(" ")
        if scheme.lower() == "bearer" and value.strip():
            return value.strip()
        raise HTTPException(
            status_code=401,
            detail="Authorization header must be 'Bearer <token>'",
            headers={"WWW-Authenticate": "Bearer"},
        )
    session_id = request.cookies.get(SESSION_COOKIE) if cookie else None
    if session_id:
        return request.app.state.web_sessions.token_for(session_id)
    return None


def _principal(request: Request, *, cookie: bool) -> Principal | None:
    secret = _secret(request, cookie=cookie)
    if secret is None:
        return None
    remote = request.client.host if request.client else None
    with session_scope(request.app.state.session_factory, write=False) as session:
        token = token_store.authenticate_token(session, secret=secret)
        if token is None:
            raise HTTPException(
                status_code=401,
                detail="token is unknown, expired or revoked",
                headers={"WWW-Authenticate": "Bearer"},
            )
        return Principal(name=token.name, role=token.role, remote_addr=remote)


def require_role(minimum: str, *, cookie: bool = False):
    """A dependency that answers 401 without a valid token and 403 with too weak a role.

    ``cookie=True`` (pages only) also accepts the sign-in session cookie; the API takes
    bearer tokens only (see the module docstring)."""

    def dependency(request: Request) -> Principal:
        settings: Settings = request.app.state.settings
        if minimum != "reader" and settings.read_only:
            raise HTTPException(status_code=403, detail="this server is read-only")
        principal = _principal(request, cookie=cookie)
        if principal is None:
            if minimum == "reader" and settings.public_reads:
                remote = request.client.host if request.client else None
                return Principal(name="anonymous", role="public", remote_addr=remote)
            raise HTTPException(
                status_code=401,
                detail=f"this needs a {minimum} token",
                headers={"WWW-Authenticate": "Bearer"},
            )
        if ROLE_RANK[principal.role] < ROLE_RANK[minimum]:
            raise HTTPException(
                status_code=403,
                detail=f"this needs the {minimum} role; "
                f"token '{principal.name}' is a {principal.role}",
            )
        return principal

    return dependency


def api_role(minimum: str):
    """The API's form of :func:`require_role` (bearer tokens only): a request without an
    ``Authorization`` header needs no database, so it is answered on the event loop; one
    with a token is checked in a worker thread (the token lookup reads the database)."""
    check = require_role(minimum)

    async def dependency(request: Request) -> Principal:
        if "authorization" not in request.headers:
            return check(request)
        return await run_in_threadpool(check, request)

    return dependency


Reader = Annotated[Principal, Depends(api_role("reader"))]
Curator = Annotated[Principal, Depends(api_role("curator"))]
Admin = Annotated[Principal, Depends(api_role("admin"))]
