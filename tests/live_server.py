"""Real `polarsvc serve` processes for the tests that need one (schemathesis, fault runs):
start on a free loopback port, wait for /health, read the one-time admin token of a demo
start, stop with SIGTERM or kill with SIGKILL."""

from __future__ import annotations

import os
import re
import signal
import socket
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import httpx

TOKEN_LINE = re.compile(r"admin token \(shown once, not stored in clear\): (psv_\S+)")


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def polarsvc_command(*arguments: str) -> list[str]:
    """The command line running ``polarsvc`` with this interpreter."""
    return [sys.executable, "-m", "polarsvc.cli", *arguments]


@dataclass
class ServerProcess:
    """One running ``polarsvc serve``."""

    process: subprocess.Popen
    base: str
    log_path: Path
    token: str | None = None
    extra: dict = field(default_factory=dict)

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
    workdir: Path, database_url: str, *arguments: str, name: str = "server",
    env: dict[str, str] | None = None, timeout_s: float = 90.0,
) -> ServerProcess:
    """Start ``polarsvc --database-url URL serve --port P ARGUMENTS`` in ``workdir`` and
    wait until it answers /health (the demo start prints an admin token, read here)."""
    port = free_port()
    log_path = workdir / f"{name}.log"
    environment = {**os.environ, "PYTHONUNBUFFERED": "1", **(env or {})}
    environment.pop("POLARSVC_DATABASE_URL", None)
    with log_path.open("w") as log:
        process = subprocess.Popen(
            polarsvc_command("--database-url", database_url, "serve", "--port", str(port),
                             "--log-level", "warning", *arguments),
            cwd=workdir, stdout=log, stderr=subprocess.STDOUT, env=environment,
        )
    server = ServerProcess(process, f"http://127.0.0.1:{port}", log_path)
    deadline = time.monotonic() + timeout_s
    while time.monotonic() < deadline:
        if process.poll() is not None:
            raise RuntimeError(f"{name} exited with {process.returncode}: {server.log()}")
        try:
            if httpx.get(server.base + "/api/v1/health", timeout=2).status_code == 200:
                break
        except httpx.HTTPError:
            time.sleep(0.2)
    else:
        server.kill()
        raise RuntimeError(f"{name} did not answer within {timeout_s} s: {server.log()}")
    match = TOKEN_LINE.search(server.log())
    server.token = match.group(1) if match else None
    return server
