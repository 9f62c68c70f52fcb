"""Memory of a server after many distinct large blade sets
(run: ``python benchmarks/bench_memory.py``).

A ``polarsvc serve`` process (one worker, SQLite, the demo data) is asked for ``--count``
(default 1000) distinct blade sets of a 200-station blade (the demo blade resampled; each
request a different operating point, so each is a cache miss: computed, stored, encoded),
alternating JSON, CSV and the binary form. The server's resident memory (VmRSS from /proc)
is printed every 100 requests and at the end, with its peak (VmHWM); the in-memory caches
are bounded in bytes, so the figure levels off instead of growing with the count.
The database grows by about 3.5 MB per blade set (a temporary folder, removed afterwards).
"""

from __future__ import annotations

import argparse
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx
from sqlalchemy.orm import sessionmaker

sys.path.insert(0, str(Path(__file__).resolve().parent))

from demo_blade import SEED, station_blade

from polarsvc.ingest import load_demo
from polarsvc.store import blades as blade_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, session_scope, upgrade_database


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def memory_mb(pid: int) -> tuple[float, float]:
    """(VmRSS, VmHWM) of a process in MB."""
    values = {}
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith(("VmRSS:", "VmHWM:")):
            values[line.split(":")[0]] = int(line.split()[1]) / 1024
    return values["VmRSS"], values["VmHWM"]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--count", type=int, default=1000)
    parser.add_argument("--stations", type=int, default=200)
    args = parser.parse_args()
    workdir = Path(tempfile.mkdtemp(prefix="polarsvc-bench-memory-"))
    url = f"sqlite:///{workdir / 'memory.db'}"
    engine = make_engine(url)
    upgrade_database(engine)
    factory = sessionmaker(engine, expire_on_commit=False)
    load_demo(factory, SEED, actor=SYSTEM_ACTOR)
    blade = station_blade(args.stations)
    with session_scope(factory, write=True) as session:
        blade_store.store_blade(session, name=blade["name"], definition=blade,
                                actor=SYSTEM_ACTOR)
    engine.dispose()
    port = free_port()
    server = subprocess.Popen(
        [sys.executable, "-m", "polarsvc.cli", "--database-url", url, "serve", "--host",
         "127.0.0.1", "--port", str(port), "--public-reads", "--log-level", "warning"],
        cwd=workdir, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
    )
    try:
        base = f"http://127.0.0.1:{port}/api/v1"
        deadline = time.monotonic() + 300
        while True:
            try:
                if httpx.get(f"{base}/health").status_code == 200:
                    break
            except httpx.TransportError:
                pass
            if server.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError("the server did not start")
            time.sleep(0.1)
        print(f"{args.count} distinct {args.stations}-station blade sets, one server process; "
              f"load average at start {os.getloadavg()[0]:.2f}")
        print(f"  after start: RSS {memory_mb(server.pid)[0]:.0f} MB")
        formats = ("json", "csv", "bin")
        start = time.perf_counter()
        with httpx.Client(timeout=300) as client:
            for index in range(args.count):
                response = client.get(
                    f"{base}/blades/{blade['name']}/tables",
                    params={"wind_speed_m_s": 8.0 + 0.001 * index, "clamp": "true",
                            "format": formats[index % len(formats)]},
                )
                if response.status_code != 200:
                    raise RuntimeError(f"request {index}: HTTP {response.status_code}")
                if (index + 1) % 100 == 0:
                    rss, peak = memory_mb(server.pid)
                    print(f"  after {index + 1:5d}: RSS {rss:6.0f} MB, peak {peak:6.0f} MB "
                          f"({time.perf_counter() - start:.0f} s)")
        rss, peak = memory_mb(server.pid)
        print(f"  final: RSS {rss:.0f} MB, peak {peak:.0f} MB; load average "
              f"{os.getloadavg()[0]:.2f}")
    finally:
        server.terminate()
        server.wait(timeout=30)
        shutil.rmtree(workdir, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
