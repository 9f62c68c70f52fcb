"""`polarsvc serve --workers N` (or POLARSVC_WORKERS): several processes share the bound port
and each answers; bad counts are refused before anything is served; the listening socket
has Nagle's algorithm off, which accepted connections inherit (Linux, tcp(7): options set on
a listening socket are inherited by the sockets accept() returns; common practice), so small
responses on kept-alive connections are not held back for the client's delayed ACK."""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest

from polarsvc.cli import main
from polarsvc.serving import bind_listener

REPO = Path(__file__).resolve().parents[2]


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def test_accepted_connections_inherit_nodelay_from_the_listener():
    listener = bind_listener("127.0.0.1", 0)
    try:
        assert listener.getsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY) != 0
        listener.listen(1)
        client = socket.create_connection(listener.getsockname())
        accepted, _ = listener.accept()
        try:
            assert accepted.getsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY) != 0
        finally:
            accepted.close()
            client.close()
    finally:
        listener.close()


@pytest.mark.parametrize(("argv", "env"), [
    (["serve", "--workers", "0"], {}),
    (["serve"], {"POLARSVC_WORKERS": "two"}),
])
def test_bad_worker_counts_are_refused(argv, env, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    for key, value in env.items():
        monkeypatch.setenv(key, value)
    assert main(["--database-url", f"sqlite:///{tmp_path / 'x.db'}", *argv]) == 2
    assert "workers" in capsys.readouterr().err.lower()


def test_two_workers_serve_the_same_database(tmp_path):
    port = free_port()
    env = {**os.environ, "POLARSVC_WORKERS": "2", "PYTHONPATH": str(REPO)}
    log = (tmp_path / "server.log").open("w+")
    server = subprocess.Popen(
        [sys.executable, "-m", "polarsvc.cli", "--database-url",
         f"sqlite:///{tmp_path / 'w.db'}", "serve", "--port", str(port), "--public-reads",
         "--log-level", "info"],
        cwd=tmp_path, env=env, stdout=log, stderr=subprocess.STDOUT,
    )
    try:
        base = f"http://127.0.0.1:{port}/api/v1"
        deadline = time.monotonic() + 240  # two interpreters import everything
        started = ""
        while time.monotonic() < deadline:
            log.seek(0)
            started = log.read()
            if started.count("Application startup complete") >= 2:
                break
            assert server.poll() is None, started
            time.sleep(0.2)
        assert started.count("Application startup complete") == 2, started
        with httpx.Client(base_url=base) as client:  # one kept-alive connection
            answers = [client.get("/health") for _ in range(20)]
            assert all(a.status_code == 200 for a in answers)
            assert client.get("/families").json() == []
    finally:
        server.terminate()
        server.wait(timeout=60)
        log.close()
