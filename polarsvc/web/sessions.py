"""Server-side browser sessions for the curation pages.

A session maps a random id (the only thing the browser's cookie holds) to the API token
secret entered on the sign-in page and a per-session CSRF token. The secret never leaves the
server: it is not written into the cookie or any page. Sessions live in memory, expire after
:data:`SESSION_LIFETIME_S` and vanish on restart (signing in again is cheap).

Forms shown before sign-in (the sign-in form itself) use a double-submit token instead:
:func:`new_form_token` goes into a cookie and a hidden field, and :func:`tokens_match`
compares them in constant time.
"""

from __future__ import annotations

import hmac
import secrets
import threading
import time
from collections.abc import Callable
from dataclasses import dataclass

SESSION_LIFETIME_S = 8 * 3600.0
"""Session lifetime [s]: one working day (common practice, no source)."""

MAX_SESSIONS = 10_000
"""Upper bound on live sessions; the oldest are dropped first beyond it."""

ID_BYTES = 32
"""Random bytes in a session id or CSRF token (256 bits, from :mod:`secrets`)."""


def new_form_token() -> str:
    """A fresh random token for a hidden form field (and its double-submit cookie)."""
    return secrets.token_urlsafe(ID_BYTES)


def tokens_match(expected: str | None, submitted: str | None) -> bool:
    """Constant-time comparison of two tokens; False when either is missing or empty."""
    if not expected or not submitted:
        return False
    return hmac.compare_digest(expected.encode("utf-8"), submitted.encode("utf-8"))


@dataclass
class _Entry:
    token_secret: str
    csrf_token: str
    expires_at: float


class WebSessions:
    """In-memory, thread-safe session table.

    Parameters
    ----------
    lifetime_s : float
        Seconds from creation until a session expires.
    clock : callable
        Monotonic time source in seconds (injected by tests).
    max_sessions : int
        Live-session bound; creating one more drops the one closest to expiry.
    """

    def __init__(
        self,
        *,
        lifetime_s: float = SESSION_LIFETIME_S,
        clock: Callable[[], float] = time.monotonic,
        max_sessions: int = MAX_SESSIONS,
    ) -> None:
        if lifetime_s <= 0:
            raise ValueError(f"lifetime_s must be positive, got {lifetime_s!r}")
        if max_sessions < 1:
            raise ValueError(f"max_sessions must be at least 1, got {max_sessions!r}")
        self._lifetime_s = float(lifetime_s)
        self._clock = clock
        self._max_sessions = max_sessions
        self._entries: dict[str, _Entry] = {}
        self._lock = threading.Lock()

    def create(self, token_secret: str) -> tuple[str, str]:
        """Open a session for ``token_secret``; returns ``(session_id, csrf_token)``."""
        if not token_secret:
            raise ValueError("token_secret must be a non-empty string")
        session_id = secrets.token_urlsafe(ID_BYTES)
        csrf_token = secrets.token_urlsafe(ID_BYTES)
        with self._lock:
            now = self._clock()
            self._purge(now)
            while len(self._entries) >= self._max_sessions:
                oldest = min(self._entries, key=lambda key: self._entries[key].expires_at)
                del self._entries[oldest]
            self._entries[session_id] = _Entry(token_secret, csrf_token, now + self._lifetime_s)
        return session_id, csrf_token

    def _live(self, session_id: str | None) -> _Entry | None:
        # Caller holds the lock.
        if not session_id:
            return None
        entry = self._entries.get(session_id)
        if entry is None:
            return None
        if self._clock() >= entry.expires_at:
            del self._entries[session_id]
            return None
        return entry

    def token_for(self, session_id: str | None) -> str | None:
        """The token secret of a live session, or None (unknown, ended or expired)."""
        with self._lock:
            entry = self._live(session_id)
            return None if entry is None else entry.token_secret

    def csrf_for(self, session_id: str | None) -> str | None:
        """The CSRF token of a live session, or None."""
        with self._lock:
            entry = self._live(session_id)
            return None if entry is None else entry.csrf_token

    def check_csrf(self, session_id: str | None, submitted: str | None) -> bool:
        """Whether ``submitted`` is the live session's CSRF token (constant-time)."""
        return tokens_match(self.csrf_for(session_id), submitted)

    def end(self, session_id: str | None) -> None:
        """Forget a session (sign-out); unknown ids are ignored."""
        if not session_id:
            return
        with self._lock:
            self._entries.pop(session_id, None)

    def __len__(self) -> int:
        with self._lock:
            self._purge(self._clock())
            return len(self._entries)

    def _purge(self, now: float) -> None:
        expired = [key for key, entry in self._entries.items() if now >= entry.expires_at]
        for key in expired:
            del self._entries[key]
