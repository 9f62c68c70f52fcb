"""A real `polarsvc serve --demo` process on a free loopback port, for the tests that need
one (the server process tests and the README snippets)."""

from __future__ import annotations

import contextlib
import os
import re
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

import httpx
import pytest

TOKEN_LINE = re.compile(r"admin token \(shown once, not stored in clear\): (psv_\S+)")


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@dataclass(frozen=True)
class DemoServer:
    """Address, one-time admin token and working folder of a running demo server."""

    base: str
    admin_token: str
    workdir: Path


def clean_environment() -> dict[str, str]:
    """The environment a user has: no database or server named."""
    env = {**os.environ, "PYTHONUNBUFFERED": "1"}
    env.pop("POLARSVC_DATABASE_URL", None)
    env.pop("POLARSVC_SERVER", None)
    return env


@contextlib.contextmanager
def running_demo_server(workdir: Path) -> Iterator[DemoServer]:
    """Start `polarsvc serve --demo` in ``workdir``, wait until it answers, stop it after."""
    port = free_port()
    log = (workdir / "server.log").open("w+")
    process = subprocess.Popen(
        [sys.executable, "-m", "polarsvc.cli", "serve", "--demo", "--port", str(port),
         "--log-level", "warning"],
        cwd=workdir, stdout=log, stderr=subprocess.STDOUT, env=clean_environment(),
    )
    base = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            if process.poll() is not None:
                log.seek(0)
                pytest.fail(f"server exited: {log.read()}")
            try:
                if httpx.get(base + "/api/v1/health", timeout=1).status_code == 200:
                    break
            except httpx.HTTPError:
                time.sleep(0.2)
        else:
            pytest.fail("server did not answer within 60 s")
        log.seek(0)
        match = TOKEN_LINE.search(log.read())
        assert match, "the demo start prints a one-time admin token"
        yield DemoServer(base=base, admin_token=match.group(1), workdir=workdir)
    finally:
        process.terminate()
        process.wait(timeout=20)
        log.close()
