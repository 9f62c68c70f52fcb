"""Start `polarsvc serve` as a separate process on a free loopback port (for the tests that
need the real thing: settings read by the command, a server's event loop under load)."""

from __future__ import annotations

import contextlib
import os
import re
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

import httpx


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


TOKEN_LINE = re.compile(r"admin token \(shown once, not stored in clear\): (psv_\S+)")


def polarsvc_command(*arguments: str) -> list[str]:
    """The command line running ``polarsvc`` with this interpreter."""
    return [sys.executable, "-m", "polarsvc.cli", *arguments]


@dataclass
class Server:
    """A running server: its base URL, process and log file (and the one-time admin token a
    demo start prints)."""

    base: str
    process: subprocess.Popen
    log_path: Path
    token: str | None = None

    def log(self) -> str:
        return self.log_path.read_text(encoding="utf-8", errors="replace")

    def stop(self) -> None:
        if self.process.poll() is None:
            self.process.terminate()
            try:
                self.process.wait(timeout=20)
            except subprocess.TimeoutExpired:
                self.kill()

    def kill(self) -> None:
        """SIGKILL: no clean shutdown, as after a power cut of the process."""
        if self.process.poll() is None:
            self.process.send_signal(signal.SIGKILL)
            self.process.wait(timeout=20)


def start_server(
    args: Sequence[str], *, cwd: Path, env: Mapping[str, str] | None = None,
    clear_env: Sequence[str] = (), timeout_s: float = 60.0, name: str | None = None,
) -> Server:
    """Start ``polarsvc serve ARGS --port P`` in ``cwd`` and wait for the health check (the
    caller stops it)."""
    port = free_port()
    environment = {**os.environ, "PYTHONUNBUFFERED": "1"}
    for variable in [*clear_env, *(k for k in os.environ if k.startswith("POLARSVC_")
                                    and not k.startswith("POLARSVC_TEST_"))]:
        environment.pop(variable, None)
    environment.update(env or {})
    log_path = cwd / f"{name or 'server'}-{port}.log"
    with log_path.open("w") as log:
        process = subprocess.Popen(
            polarsvc_command(*_serve_arguments(args), "--port", str(port),
                             "--log-level", "warning"),
            cwd=cwd, stdout=log, stderr=subprocess.STDOUT, env=environment,
        )
    server = Server(base=f"http://127.0.0.1:{port}", process=process, log_path=log_path)
    deadline = time.monotonic() + timeout_s
    while True:
        if process.poll() is not None:
            raise RuntimeError(f"server exited: {server.log()}")
        try:
            if httpx.get(server.base + "/api/v1/health", timeout=1).status_code == 200:
                break
        except httpx.HTTPError:
            pass
        if time.monotonic() > deadline:
            server.kill()
            raise RuntimeError(f"server did not answer within {timeout_s} s: {server.log()}")
        time.sleep(0.2)
    match = TOKEN_LINE.search(server.log())
    server.token = match.group(1) if match else None
    return server


def _serve_arguments(args: Sequence[str]) -> list[str]:
    """``serve ARGS``, with a leading ``--database-url URL`` moved before ``serve``."""
    args = list(args)
    if args[:1] == ["--database-url"]:
        return [*args[:2], "serve", *args[2:]]
    return ["serve", *args]


@contextlib.contextmanager
def running_server(
    args: Sequence[str], *, cwd: Path, env: Mapping[str, str] | None = None,
    clear_env: Sequence[str] = (), timeout_s: float = 60.0,
) -> Iterator[Server]:
    """``polarsvc serve ARGS --port P`` in ``cwd``; waits for the health check; stops it."""
    server = start_server(args, cwd=cwd, env=env, clear_env=clear_env, timeout_s=timeout_s)
    try:
        yield server
    finally:
        server.stop()
