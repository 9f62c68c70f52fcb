"""Start `polarsvc serve` as a separate process on a free loopback port (for the tests that
need the real thing: settings read by the command, a server's event loop under load)."""

from __future__ import annotations

import contextlib
import os
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


@dataclass
class Server:
    """A running server: its base URL, process and log file."""

    base: str
    process: subprocess.Popen
    log_path: Path

    def log(self) -> str:
        return self.log_path.read_text()


@contextlib.contextmanager
def running_server(
    args: Sequence[str], *, cwd: Path, env: Mapping[str, str] | None = None,
    clear_env: Sequence[str] = (), timeout_s: float = 60.0,
) -> Iterator[Server]:
    """``polarsvc serve ARGS --port P`` in ``cwd``; waits for the health check; stops it."""
    port = free_port()
    environment = {**os.environ, "PYTHONUNBUFFERED": "1"}
    for name in [*clear_env, *(k for k in os.environ if k.startswith("POLARSVC_")
                                and not k.startswith("POLARSVC_TEST_"))]:
        environment.pop(name, None)
    environment.update(env or {})
    log_path = cwd / f"server-{port}.log"
    log = log_path.open("w")
    process = subprocess.Popen(
        [sys.executable, "-m", "polarsvc.cli", "serve", *args, "--port", str(port),
         "--log-level", "warning"],
        cwd=cwd, stdout=log, stderr=subprocess.STDOUT, env=environment,
    )
    server = Server(base=f"http://127.0.0.1:{port}", process=process, log_path=log_path)
    try:
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
                raise RuntimeError(f"server did not answer within {timeout_s} s")
            time.sleep(0.2)
        yield server
    finally:
        process.terminate()
        try:
            process.wait(timeout=20)
        except subprocess.TimeoutExpired:
            process.kill()
            process.wait()
        log.close()
