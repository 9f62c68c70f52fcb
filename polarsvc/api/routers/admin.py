"""Token management (admin) and the audit trail (read-only: no endpoint edits it)."""

from __future__ import annotations

import datetime as dt
import re
from typing import Annotated, Any

from fastapi import APIRouter, HTTPException, Query, Request
from pydantic import WithJsonSchema

from polarsvc.aero.errors import ParameterError
from polarsvc.api import visibility
from polarsvc.api.deps import Admin, Reader, ReadSession
from polarsvc.api.responses import json_response, page_response
from polarsvc.api.schemas import ERROR_RESPONSES, PAGE_SIZE, AfterQuery, LimitQuery, TokenIn
from polarsvc.store import tokens as token_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import ApiToken
from polarsvc.store.paging import decode_cursor, encode_cursor

router = APIRouter(tags=["access and audit"], responses=ERROR_RESPONSES)

MOMENT_PATTERN = re.compile(
    r"(?P<date>\d{4}-\d{2}-\d{2})[Tt ](?P<hms>\d{2}:\d{2}):(?P<second>\d{2})"
    r"(?P<fraction>\.\d+)?(?P<zone>[Zz]|[+-]\d{2}:\d{2})"
)
"""An ISO 8601 / RFC 3339 date-time with a time zone (the audit filters take nothing else:
a bare number is not read as a Unix time)."""

Moment = Annotated[
    str,
    WithJsonSchema({"type": "string", "format": "date-time"}),
    Query(description="ISO 8601 date-time with a time zone, e.g. 2026-01-01T00:00:00Z"),
]


def parse_moment(parameter: str, text: str | None) -> dt.datetime | None:
    """An ISO 8601 date-time with a time zone, as a timezone-aware datetime.

    A leap second (``:60``) is read as ``:59`` (the audit clock has none); a time outside the
    years 1..9999 once converted to UTC is clamped to the nearest end.

    Raises
    ------
    ParameterError
        Naming ``parameter``, for anything else (a bare number, a date without time or zone).
    """
    if text is None:
        return None
    match = MOMENT_PATTERN.fullmatch(text.strip())
    if match is None:
        raise ParameterError(
            parameter,
            f"{text[:40]!r} is not an ISO 8601 date-time with a time zone "
            "(e.g. 2026-01-01T00:00:00Z)",
        )
    second = min(int(match["second"]), 59)
    zone = "+00:00" if match["zone"] in ("Z", "z") else match["zone"]
    try:
        value = dt.datetime.fromisoformat(
            f"{match['date']}T{match['hms']}:{second:02d}{match['fraction'] or ''}{zone}"
        )
    except ValueError as exc:
        raise ParameterError(parameter, f"{text[:40]!r} is not a valid date-time ({exc})") from None
    try:
        return value.astimezone(dt.UTC)
    except OverflowError:
        edge = dt.datetime.min if value.year < 5000 else dt.datetime.max
        return edge.replace(tzinfo=dt.UTC)


def token_summary(token: ApiToken) -> dict[str, Any]:
    """A token's public form: never its secret nor its hash."""
    return {
        "name": token.name,
        "role": token.role,
        "created_at": token.created_at.isoformat(),
        "created_by": token.created_by,
        "expires_at": token.expires_at.isoformat() if token.expires_at else None,
        "revoked_at": token.revoked_at.isoformat() if token.revoked_at else None,
    }


@router.post(
    "/tokens",
    status_code=201,
    summary="Create an API token (admin); the secret is shown in this answer only",
)
def create_token(body: TokenIn, request: Request, principal: Admin):
    with session_scope(request.app.state.session_factory, write=True) as session:
        token, secret = token_store.create_token(
            session, name=body.name, role=body.role, expires_at=body.expires_at,
            actor=principal.actor(),
        )
        return json_response({**token_summary(token), "secret": secret}, status_code=201)


@router.get("/tokens", summary="List tokens (admin, one page); secrets are never shown")
def list_tokens(
    request: Request, session: ReadSession, _: Admin, limit: LimitQuery = PAGE_SIZE,
    after: AfterQuery = None,
):
    """Tokens by name, revoked and expired ones included. One page per request: follow the
    ``Link: <...>; rel="next"`` header; ``X-Total-Count`` gives the number of tokens."""
    page = token_store.page_tokens(session, after=after, limit=limit)
    return page_response(
        request, [token_summary(t) for t in page.items], next_cursor=page.next_cursor,
        total=page.total,
    )


@router.delete("/tokens/{name}", summary="Revoke a token (admin)")
def revoke_token(name: str, request: Request, principal: Admin):
    with session_scope(request.app.state.session_factory, write=True) as session:
        token = token_store.revoke_token(session, name=name, actor=principal.actor())
        return json_response(token_summary(token))


@router.get(
    "/audit",
    summary="The audit trail, oldest first (filter by time, object, actor); token names and "
    "client addresses are shown to admins only",
)
def audit_trail(
    request: Request,
    session: ReadSession,
    principal: Reader,
    since: Moment | None = None,
    until: Moment | None = None,
    object: Annotated[str | None, Query(max_length=200)] = None,
    actor: Annotated[str | None, Query(max_length=200, description="token name (admins)")] = None,
    limit: Annotated[int, Query(ge=1, le=10000)] = 1000,
    after: AfterQuery = None,
):
    """Each event names its actor's role; the actor's token name and the client address are
    shown to admins only (None for others), and token-management events to admins only.
    At most ``limit`` events per page; follow the ``Link: <...>; rel="next"`` header
    (present while a page is full) for the following events."""
    after_id = decode_cursor(after, (int,))[0] if after is not None else None
    try:
        events = visibility.audit_trail(
            session, principal, since=parse_moment("since", since),
            until=parse_moment("until", until), object_key=object, actor=actor,
            limit=limit, after_id=after_id,
        )
    except visibility.ActorFilterRefused as exc:
        raise HTTPException(403, detail=str(exc)) from None
    cursor = encode_cursor([events[-1]["id"]]) if len(events) == limit else None
    return page_response(request, events, next_cursor=cursor, total=None)
