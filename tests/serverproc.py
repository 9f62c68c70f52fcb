"""Start `polarsvc serve` as a separate process on a free loopback port (for the tests that
need the real thing: settings read by the command, a server's event loop under load).

Each server runs in its own session, so its process group holds the command and, with
``--workers N``, uvicorn's supervisor and its worker processes: stopping or killing a server
signals the whole group and waits until no process of it is left and nothing answers on its
port (a ``kill -9`` of the supervisor alone would leave the workers serving)."""

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

    @property
    def port(self) -> int:
        return int(self.base.rsplit(":", 1)[1])

    def log(self) -> str:
        return self.log_path.read_text(encoding="utf-8", errors="replace")

    def stop(self) -> None:
        """SIGTERM (uvicorn's supervisor stops its workers), then SIGKILL to what is left."""
        if self.process.poll() is None:
            self.process.terminate()
            with contextlib.suppress(subprocess.TimeoutExpired):
                self.process.wait(timeout=20)
        self.kill()

    def kill(self) -> None:
        """SIGKILL to the whole process group at once: no clean shutdown, as after a power
        cut of the machine's processes. Returns when none of them is left and the port is
        closed (raises otherwise)."""
        with contextlib.suppress(ProcessLookupError):
            os.killpg(self.process.pid, signal.SIGKILL)
        self.process.wait(timeout=20)
        deadline = time.monotonic() + 20
        while self.group_alive() or self.port_open():
            if time.monotonic() > deadline:
                raise RuntimeError(f"server group {self.process.pid} still running "
                                   f"{self.group_alive()} or port {self.port} open")
            with contextlib.suppress(ProcessLookupError):
                os.killpg(self.process.pid, signal.SIGKILL)
            time.sleep(0.1)

    def group_alive(self) -> list[int]:
        """Processes of the server's group that are not yet dead (zombies count as dead:
        they hold no socket and no file)."""
        return group_members(self.process.pid)

    def port_open(self) -> bool:
        """Whether something accepts connections on the server's port."""
        with socket.socket() as sock:
            sock.settimeout(1)
            return sock.connect_ex(("127.0.0.1", self.port)) == 0


def group_members(pgid: int) -> list[int]:
    """Ids of the living (not zombie) processes whose process group is ``pgid`` (Linux
    /proc)."""
    members = []
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
        except OSError:
            continue
        # pid (comm) state ppid pgrp ...: comm may hold spaces, so split after its ")"
        fields = stat[stat.rindex(")") + 2:].split()
        if int(fields[2]) == pgid and fields[0] not in ("Z", "X"):
            members.append(int(entry.name))
    return members


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
            start_new_session=True,
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
