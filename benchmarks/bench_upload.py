"""Benchmark: does a large upload stall its server? (run: ``python benchmarks/bench_upload.py``)

A real ``polarsvc serve`` process on a fresh SQLite file. Measured in one run:

1. health-check latency on an idle server;
2. health-check latency while the same process stores one large upload (a JSON list of
   ``--polars`` invented polars of 41 rows, synthetic), polled every 50 ms by a second
   client; the ratio of medians (busy / idle) is printed;
3. the upload's own time, and the time of parsing the same bytes in this process (the part
   that used to run on the server's event loop).

Options: ``--polars N`` (default 2000). The machine's load (``os.getloadavg``) is printed.
"""

from __future__ import annotations

import argparse
import json
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

import httpx


def invented_polars(count: int) -> bytes:
    """A JSON list of ``count`` distinct polars (synthetic, no source)."""
    alpha = [float(a) for a in range(-10, 31)]
    return json.dumps([
        {
            "airfoil": "TERN-210", "family": "tern",
            "conditions": {"thickness": 0.21, "reynolds": 1e6 + 1000.0 * i, "mach": 0.0},
            "provenance": {"source_kind": "synthetic", "notes": f"benchmark {i}"},
            "table": {"alpha_deg": alpha, "cl": [0.01 * a + 0.2 for a in alpha],
                      "cd": [0.008 + 1e-4 * a * a for a in alpha]},
        }
        for i in range(count)
    ]).encode()


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def health_latencies(client: httpx.Client, *, count: int | None = None,
                     while_alive: threading.Thread | None = None) -> list[float]:
    latencies = []
    while (count is not None and len(latencies) < count) or (
        while_alive is not None and while_alive.is_alive()
    ):
        started = time.perf_counter()
        client.get("/api/v1/health").raise_for_status()
        latencies.append(time.perf_counter() - started)
        time.sleep(0.05)
    return latencies


def describe(name: str, values: list[float]) -> str:
    ordered = sorted(values)
    p90 = ordered[min(len(ordered) - 1, int(0.9 * len(ordered)))]
    return (f"{name}: n={len(values)} median {statistics.median(values) * 1000:.1f} ms, "
            f"p90 {p90 * 1000:.1f} ms, max {max(values) * 1000:.1f} ms")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--polars", type=int, default=2000)
    args = parser.parse_args()
    body = invented_polars(args.polars)

    from polarsvc.ingest import parse_upload
    from polarsvc.store import tokens
    from polarsvc.store.audit import SYSTEM_ACTOR
    from polarsvc.store.db import (
        make_engine,
        make_session_factory,
        session_scope,
        upgrade_database,
    )

    with tempfile.TemporaryDirectory() as folder:
        url = f"sqlite:///{Path(folder) / 'bench.db'}"
        engine = make_engine(url)
        upgrade_database(engine)
        with session_scope(make_session_factory(engine), write=True) as session:
            _, secret = tokens.create_token(session, name="bench", role="curator",
                                            actor=SYSTEM_ACTOR)
        engine.dispose()
        port = free_port()
        env = {**os.environ, "POLARSVC_DATABASE_URL": url,
               "POLARSVC_MAX_UPLOAD_BYTES": str(len(body) + 1)}
        server = subprocess.Popen(
            [sys.executable, "-m", "polarsvc.cli", "serve", "--port", str(port),
             "--log-level", "warning"], cwd=folder, env=env,
            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        base = f"http://127.0.0.1:{port}"
        try:
            with httpx.Client(base_url=base, timeout=600) as client:
                for _ in range(300):
                    try:
                        client.get("/api/v1/health")
                        break
                    except httpx.HTTPError:
                        time.sleep(0.2)
                idle = health_latencies(client, count=40)
                outcome: dict[str, float] = {}

                def upload() -> None:
                    started = time.perf_counter()
                    answer = httpx.post(
                        base + "/api/v1/polars", content=body, timeout=600,
                        headers={"Authorization": f"Bearer {secret}",
                                 "Content-Type": "application/json"})
                    answer.raise_for_status()
                    outcome["seconds"] = time.perf_counter() - started

                thread = threading.Thread(target=upload)
                thread.start()
                busy = health_latencies(client, while_alive=thread)
                thread.join()
        finally:
            server.terminate()
            server.wait(timeout=30)
    started = time.perf_counter()
    parse_upload(body, filename="bench.json", max_bytes=len(body) + 1)
    parse_seconds = time.perf_counter() - started

    print(f"load average {os.getloadavg()[0]:.2f} (1 min); upload of {args.polars} polars, "
          f"{len(body) / 1e6:.2f} MB")
    print(describe("health, idle server        ", idle))
    print(describe("health, during the upload  ", busy))
    print(f"ratio of medians busy/idle: {statistics.median(busy) / statistics.median(idle):.2f}")
    print(f"upload answered in {outcome['seconds']:.2f} s; parsing alone {parse_seconds:.2f} s")


if __name__ == "__main__":
    main()
