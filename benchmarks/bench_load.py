"""Load benchmark of ``polarsvc serve`` on loopback (run: ``python benchmarks/bench_load.py``).

A server process is started with 1 and then 2 workers on a database holding the demo data
(synthetic, seed_polars/): SQLite by default, or a fresh schema of a PostgreSQL database
(``--postgres URL``, dropped afterwards). For each request below and 1, 8 and 32 kept-alive
connections, a minimal asyncio HTTP/1.1 client (one request in flight per connection) sends
requests for ``--seconds`` (default 3) and prints requests per second, the median (p50) and
99th-percentile (p99) latency and the errors (non-200 answers, broken connections):

* ``/api/v1/health`` (the floor: no database);
* a stored polar's table (``/api/v1/polars/{hash}/table``, 76 rows, JSON);
* the demo blade set (20 stations x 721 angles) in JSON, CSV and the binary form;
* the revision listing (``/api/v1/polars``, one page).

Bounded: loopback only, at most ``--seconds`` per cell and 32 connections. The client runs in
this process on the same machine as the server: on 2 cores the client takes a good part of
one, so absolute figures are low; compare ratios within one run.
"""

from __future__ import annotations

import argparse
import asyncio
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import uuid
from pathlib import Path

import httpx
from sqlalchemy import create_engine, make_url, text
from sqlalchemy.orm import sessionmaker
from sqlalchemy.pool import NullPool

sys.path.insert(0, str(Path(__file__).resolve().parent))

from demo_blade import SEED

from polarsvc.ingest import load_demo
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, upgrade_database

HOST = "127.0.0.1"
CONNECTIONS = (1, 8, 32)


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind((HOST, 0))
        return sock.getsockname()[1]


async def _one_connection(port: int, path: str, deadline: float, latencies: list[float],
                          errors: list[str]) -> None:
    request = (f"GET {path} HTTP/1.1\r\nHost: {HOST}:{port}\r\n"
               "Accept-Encoding: identity\r\n\r\n").encode("ascii")
    try:
        reader, writer = await asyncio.open_connection(HOST, port)
    except OSError as exc:
        errors.append(f"connect: {exc}")
        return
    try:
        while time.perf_counter() < deadline:
            start = time.perf_counter()
            writer.write(request)
            head = await reader.readuntil(b"\r\n\r\n")
            status = int(head.split(b" ", 2)[1])
            length = 0
            for line in head.split(b"\r\n"):
                if line.lower().startswith(b"content-length:"):
                    length = int(line.split(b":", 1)[1])
            await reader.readexactly(length)
            latencies.append(time.perf_counter() - start)
            if status != 200:
                errors.append(f"HTTP {status}")
    except (OSError, asyncio.IncompleteReadError, ValueError) as exc:
        errors.append(f"{type(exc).__name__}: {exc}")
    finally:
        writer.close()


async def _load(port: int, path: str, connections: int, seconds: float) -> dict[str, float]:
    latencies: list[float] = []
    errors: list[str] = []
    start = time.perf_counter()
    deadline = start + seconds
    await asyncio.gather(*(
        _one_connection(port, path, deadline, latencies, errors) for _ in range(connections)
    ))
    elapsed = time.perf_counter() - start
    latencies.sort()
    p99 = latencies[min(len(latencies) - 1, int(0.99 * len(latencies)))] if latencies else 0.0
    return {
        "rps": len(latencies) / elapsed,
        "p50": 1e3 * statistics.median(latencies) if latencies else float("nan"),
        "p99": 1e3 * p99,
        "errors": len(errors),
    }


def prepare_database(postgres: str | None, workdir: Path) -> tuple[str, callable]:
    """A database with the demo data; returns its URL and a clean-up function."""
    if postgres is None:
        url = f"sqlite:///{workdir / 'load.db'}"
        cleanup = lambda: None  # noqa: E731
    else:
        schema = f"bench_{uuid.uuid4().hex[:12]}"
        admin = create_engine(postgres, poolclass=NullPool)
        with admin.begin() as connection:
            connection.execute(text(f'CREATE SCHEMA "{schema}"'))
        url = make_url(postgres).update_query_dict(
            {"options": f"-csearch_path={schema}"}).render_as_string(hide_password=False)

        def cleanup() -> None:
            with admin.begin() as connection:
                connection.execute(text(f'DROP SCHEMA IF EXISTS "{schema}" CASCADE'))
            admin.dispose()
    engine = make_engine(url)
    upgrade_database(engine)
    load_demo(sessionmaker(engine, expire_on_commit=False), SEED, actor=SYSTEM_ACTOR)
    engine.dispose()
    return url, cleanup


def start_server(url: str, workers: int, workdir: Path) -> tuple[subprocess.Popen, int]:
    port = free_port()
    server = subprocess.Popen(
        [sys.executable, "-m", "polarsvc.cli", "--database-url", url, "serve", "--host", HOST,
         "--port", str(port), "--public-reads", "--workers", str(workers),
         "--log-level", "warning"],
        cwd=workdir, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    deadline = time.monotonic() + 300  # worker processes import everything anew
    while True:
        try:
            if httpx.get(f"http://{HOST}:{port}/api/v1/health").status_code == 200:
                return server, port
        except httpx.TransportError:
            pass
        if server.poll() is not None or time.monotonic() > deadline:
            raise RuntimeError("the server did not start")
        time.sleep(0.1)


def paths(port: int) -> dict[str, str]:
    base = f"http://{HOST}:{port}/api/v1"
    first = httpx.get(f"{base}/polars", params={"limit": 1}).json()[0]["content_hash"]
    blade = "/api/v1/blades/skerry-48/tables"
    return {
        "health": "/api/v1/health",
        "polar table (76 rows)": f"/api/v1/polars/{first}/table",
        "blade set json": blade,
        "blade set csv": f"{blade}?format=csv",
        "blade set bin": f"{blade}?format=bin",
        "listing /polars": "/api/v1/polars",
    }


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seconds", type=float, default=3.0)
    parser.add_argument("--workers", default="1,2")
    parser.add_argument("--connections", default=",".join(map(str, CONNECTIONS)))
    parser.add_argument("--postgres", help="PostgreSQL URL (a schema is made and dropped)")
    args = parser.parse_args()
    if args.seconds > 30:
        parser.error("--seconds is bounded to 30")
    connections = [int(c) for c in args.connections.split(",")]
    if max(connections) > 64:
        parser.error("at most 64 connections")
    workdir = Path(tempfile.mkdtemp(prefix="polarsvc-bench-load-"))
    url, cleanup = prepare_database(args.postgres, workdir)
    results: dict[tuple[int, str, int], dict[str, float]] = {}
    try:
        for workers in [int(w) for w in args.workers.split(",")]:
            server, port = start_server(url, workers, workdir)
            try:
                named = paths(port)
                for path in named.values():
                    # fill the caches of every worker: connections held open together are
                    # spread over the workers (one after another may all reach one)
                    warm = asyncio.run(_load(port, path, 4 * workers, 0.5))
                    assert warm["errors"] == 0, (path, warm)
                for name, path in named.items():
                    for count in connections:
                        results[(workers, name, count)] = asyncio.run(
                            _load(port, path, count, args.seconds))
            finally:
                server.terminate()
                server.wait(timeout=30)
    finally:
        cleanup()
    backend = "PostgreSQL" if args.postgres else "SQLite"
    print(f"load on loopback, {backend}, {args.seconds:g} s per cell; "
          f"load average {os.getloadavg()[0]:.2f} (cores: {os.cpu_count()})")
    print(f"  {'workers':>7} {'request':22} {'conns':>5} {'req/s':>8} {'p50 ms':>8} "
          f"{'p99 ms':>8} {'errors':>6}")
    for (workers, name, count), r in results.items():
        print(f"  {workers:>7} {name:22} {count:>5} {r['rps']:8.0f} {r['p50']:8.2f} "
              f"{r['p99']:8.2f} {r['errors']:>6.0f}")
    worker_counts = sorted({w for w, _, _ in results})
    for workers in worker_counts:
        for count in connections:
            health = results[(workers, "health", count)]["rps"]
            table = results[(workers, "polar table (76 rows)", count)]["rps"]
            print(f"  {workers} worker(s), {count} connection(s): polar table / health req/s "
                  f"= {table / health:.2f}")
    if len(worker_counts) > 1:
        for count in connections:
            one = results[(worker_counts[0], "health", count)]["rps"]
            two = results[(worker_counts[-1], "health", count)]["rps"]
            print(f"  /health req/s, {worker_counts[-1]} workers / {worker_counts[0]}, "
                  f"{count} connection(s): {two / one:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
