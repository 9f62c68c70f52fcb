"""Local bookkeeping of ``polarsvc serve``: the listening socket, bound before anything is
printed, and the record of which database (and address) the server of a folder serves, so
that the command-line tools run in the same folder use the same database.

The record is ``./polarsvc-data/serving.json``::

    {"database_url": "sqlite:////abs/path/polarsvc-data/demo.db" | null,
     "address": "http://127.0.0.1:8000", "demo": true, "pid": 1234,
     "started_at": "2026-12-02T11:00:00+00:00"}

It is written by every ``serve`` and kept after the server stops (the database stays the
one of that folder). A URL holding a password is never written (``database_url`` is then
null and the tools fall back to ``POLARSVC_DATABASE_URL``).
"""

from __future__ import annotations

import datetime as dt
import errno
import json
import os
import socket
from dataclasses import dataclass
from pathlib import Path

from sqlalchemy import make_url

from polarsvc.store.db import DEFAULT_DATA_DIR

SERVING_RECORD = DEFAULT_DATA_DIR / "serving.json"
"""Where ``serve`` records its database and address (relative to the working folder)."""


class CannotServe(OSError):
    """The server cannot listen where asked (address in use, unknown host)."""


def bind_listener(host: str, port: int) -> socket.socket:
    """A TCP socket bound to ``host:port`` (not yet listening), to hand to the server.

    Binding first, before the database is prepared or a token printed, means a busy port
    is reported at once and no other process can take the port in between.

    Raises
    ------
    CannotServe
        If the host does not resolve or the port is in use (or not permitted).
    """
    try:
        infos = socket.getaddrinfo(
            host, port, type=socket.SOCK_STREAM, flags=socket.AI_PASSIVE
        )
    except socket.gaierror as exc:
        raise CannotServe(f"cannot listen on {host}:{port}: unknown host ({exc})") from None
    family, kind, proto, _, address = infos[0]
    listener = socket.socket(family, kind, proto)
    listener.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
    if family in (socket.AF_INET, socket.AF_INET6):
        # accepted connections inherit it (Linux): small responses on kept-alive
        # connections go out at once instead of waiting for the client's delayed ACK
        listener.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
    try:
        listener.bind(address)
    except OSError as exc:
        listener.close()
        reason = "in use" if exc.errno == errno.EADDRINUSE else f"not available ({exc.strerror})"
        raise CannotServe(
            f"cannot listen on {host}:{port}: the port is {reason}; stop the program "
            f"listening there or choose another port with --port"
        ) from None
    return listener


def shareable_url(database_url: str) -> str | None:
    """The URL as it may be written to the record: None if it holds a password."""
    url = make_url(database_url)
    if url.password is not None:
        return None
    return url.render_as_string(hide_password=False)


def write_serving_record(
    *, database_url: str, address: str, demo: bool, folder: Path = DEFAULT_DATA_DIR
) -> Path:
    """Record which database and address the server started in this folder uses."""
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / SERVING_RECORD.name
    record = {
        "database_url": shareable_url(database_url),
        "address": address,
        "demo": demo,
        "pid": os.getpid(),
        "started_at": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"),
    }
    partial = path.with_name(path.name + ".partial")
    partial.write_text(json.dumps(record, indent=1) + "\n", encoding="utf-8")
    partial.replace(path)
    return path


@dataclass(frozen=True)
class ServingRecord:
    """What the last ``serve`` in this folder recorded."""

    database_url: str | None
    address: str | None
    demo: bool


def read_serving_record(path: Path = SERVING_RECORD) -> ServingRecord | None:
    """The record of the last ``serve`` here, or None (absent or unreadable). A recorded
    SQLite database whose file has since gone is left out."""
    try:
        record = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    if not isinstance(record, dict):
        return None
    url = record.get("database_url")
    if isinstance(url, str):
        parsed = make_url(url)
        if parsed.get_backend_name() == "sqlite" and not Path(parsed.database or "").is_file():
            url = None
    else:
        url = None
    address = record.get("address")
    return ServingRecord(
        database_url=url,
        address=address if isinstance(address, str) else None,
        demo=bool(record.get("demo")),
    )
