"""Token management (admin) and the audit trail (read-only: no endpoint edits it)."""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Any

from fastapi import APIRouter, HTTPException, Query, Request

from polarsvc.api import visibility
from polarsvc.api.deps import Admin, Reader, ReadSession
from polarsvc.api.responses import json_response, page_response
from polarsvc.api.schemas import ERROR_RESPONSES, AfterQuery, TokenIn
from polarsvc.store import tokens as token_store
from polarsvc.store.db import session_scope
from polarsvc.store.models import ApiToken
from polarsvc.store.paging import decode_cursor, encode_cursor

router = APIRouter(tags=["access and audit"], responses=ERROR_RESPONSES)


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


@router.get("/tokens", summary="List tokens (admin); secrets are never shown")
def list_tokens(session: ReadSession, _: Admin):
    return json_response([token_summary(t) for t in token_store.list_tokens(session)])


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
    since: dt.datetime | None = None,
    until: dt.datetime | None = None,
    object: Annotated[str | None, Query(max_length=200)] = None,
    actor: Annotated[str | None, Query(max_length=200, description="token name (admins)")] = None,
    limit: Annotated[int, Query(ge=1, le=10000)] = 1000,
    after: AfterQuery = None,
):
    """Each event names its actor's role; the actor's token name and the client address are
    shown to admins only (None for others), and token-management events to admins only.
    At most ``limit`` events per page; follow the ``Link: <...>; rel="next"`` header
    (present while a page is full) for the following events."""
    for name, value in (("since", since), ("until", until)):
        if value is not None and value.tzinfo is None:
            raise HTTPException(422, detail=f"{name} must carry a time zone (e.g. ...Z)")
    after_id = decode_cursor(after, (int,))[0] if after is not None else None
    try:
        events = visibility.audit_trail(
            session, principal, since=since, until=until, object_key=object, actor=actor,
            limit=limit, after_id=after_id,
        )
    except visibility.ActorFilterRefused as exc:
        raise HTTPException(403, detail=str(exc)) from None
    cursor = encode_cursor([events[-1]["id"]]) if len(events) == limit else None
    return page_response(request, events, next_cursor=cursor, total=None)
