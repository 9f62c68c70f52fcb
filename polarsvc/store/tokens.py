"""API tokens: only the SHA-256 of a secret is stored; the secret is shown once."""

from __future__ import annotations

import datetime as dt
import hashlib
import hmac
import secrets
from collections.abc import Sequence

from sqlalchemy import func, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from polarsvc.store._lookup import check_choice, check_name
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import Conflict, InvalidValue, NotFound
from polarsvc.store.models import TOKEN_ROLES, ApiToken, utc_now
from polarsvc.store.paging import (
    DEFAULT_PAGE_SIZE,
    Page,
    check_limit,
    count_rows,
    decode_cursor,
    take_page,
)

TOKEN_PREFIX = "psv_"
"""Prefix of every secret, so a leaked one is recognisable (e.g. by secret scanners)."""
TOKEN_BYTES = 32


def hash_secret(secret: str) -> str:
    """SHA-256 hex of a token secret (UTF-8)."""
    return hashlib.sha256(secret.encode("utf-8")).hexdigest()


def create_token(
    session: Session,
    *,
    name: str,
    role: str,
    expires_at: dt.datetime | None = None,
    actor: Actor,
) -> tuple[ApiToken, str]:
    """Create a token; return the row and the secret (``psv_`` + 43 URL-safe characters).

    The secret is not stored and cannot be recovered.

    Raises
    ------
    Conflict
        If a token of that name exists (also a revoked one: names stay unique).
    InvalidValue
        On an unknown role, a bad name or a naive / past expiry.
    """
    check_name("name", name)
    check_choice("role", role, TOKEN_ROLES)
    if expires_at is not None:
        if expires_at.tzinfo is None or expires_at.utcoffset() is None:
            raise InvalidValue("expires_at", "must be timezone-aware")
        if expires_at <= utc_now():
            raise InvalidValue("expires_at", f"{expires_at.isoformat()} is not in the future")
    if session.scalars(select(ApiToken).where(ApiToken.name == name)).one_or_none():
        raise Conflict("token", name, "already exists")
    secret = TOKEN_PREFIX + secrets.token_urlsafe(TOKEN_BYTES)
    token = ApiToken(
        name=name,
        role=role,
        token_hash=hash_secret(secret),
        expires_at=expires_at,
        created_by=actor.name,
    )
    try:
        with session.begin_nested():
            session.add(token)
    except IntegrityError:
        raise Conflict("token", name, "already exists") from None
    record_event(
        session,
        actor=actor,
        action="token.create",
        object_kind="api_token",
        object_key=name,
        detail={"role": role, "expires_at": expires_at},
    )
    return token, secret


def authenticate_token(
    session: Session, *, secret: str, now: dt.datetime | None = None
) -> ApiToken | None:
    """The token whose secret this is, or None if it is unknown, expired or revoked.

    The lookup goes through the unique hash; the final comparison uses
    :func:`hmac.compare_digest`.
    """
    if not isinstance(secret, str) or not secret.startswith(TOKEN_PREFIX):
        return None
    digest = hash_secret(secret)
    token = session.scalars(select(ApiToken).where(ApiToken.token_hash == digest)).one_or_none()
    if token is None or not hmac.compare_digest(token.token_hash, digest):
        return None
    now = utc_now() if now is None else now
    if token.revoked_at is not None and token.revoked_at <= now:
        return None
    if token.expires_at is not None and token.expires_at <= now:
        return None
    return token


def get_token(session: Session, name: str) -> ApiToken:
    """The token called ``name``; :class:`NotFound` otherwise."""
    token = session.scalars(select(ApiToken).where(ApiToken.name == name)).one_or_none()
    if token is None:
        raise NotFound("token", name)
    return token


def revoke_token(session: Session, *, name: str, actor: Actor) -> ApiToken:
    """Revoke a token (idempotent: revoking a revoked token changes and records nothing)."""
    token = get_token(session, name)
    if token.revoked_at is not None:
        return token
    token.revoked_at = utc_now()
    session.flush()
    record_event(
        session,
        actor=actor,
        action="token.revoke",
        object_kind="api_token",
        object_key=name,
        detail={"role": token.role},
    )
    return token


def list_tokens(session: Session) -> Sequence[ApiToken]:
    """All tokens by name (revoked and expired ones included)."""
    return session.scalars(select(ApiToken).order_by(ApiToken.name)).all()


def page_tokens(
    session: Session, *, after: str | None = None, limit: int = DEFAULT_PAGE_SIZE
) -> Page[ApiToken]:
    """One page of tokens by name (revoked and expired ones included; keyset pagination,
    :mod:`polarsvc.store.paging`); the total is counted.

    Raises
    ------
    InvalidValue
        On a bad cursor or limit.
    """
    limit = check_limit(limit)
    statement = select(ApiToken)
    if after is not None:
        (name,) = decode_cursor(after, (str,))
        statement = statement.where(ApiToken.name > name)
    rows = session.scalars(statement.order_by(ApiToken.name).limit(limit + 1)).all()
    total = count_rows(session, select(func.count(ApiToken.id)), ("tokens",))
    return take_page(rows, limit, lambda t: (t.name,), total)
