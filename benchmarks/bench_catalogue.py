"""Benchmark of the catalogue's listings at 1k and 50k polars
(run: ``python benchmarks/bench_catalogue.py``).

For each size a synthetic catalogue is built (:mod:`catalogue_db`: bulk inserts, about a
minute for 50k) and cached under the temporary folder between runs
(``<tmp>/polarsvc-bench-catalogue/``); each run serves a fresh copy with ``polarsvc serve``
in its own process (public reads, loopback), asks every list endpoint and page ``--repeats``
times on one kept-alive connection, and prints the median per request, the ratio 50k/1k, and
the server's resident memory (RSS, from /proc) after the run.

The requests are the first page as a client asks for it (default page sizes) and, for the
revision listing, a page deep in the listing (through its cursor) and filtered pages.
Options: ``--sizes 1000,50000``, ``--repeats N`` (default 15), ``--cache-dir DIR``,
``--rebuild``.
"""

from __future__ import annotations

import argparse
import os
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx

sys.path.insert(0, str(Path(__file__).resolve().parent))

from catalogue_db import build_catalogue, cache_path


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def rss_mb(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def requests_for(client: httpx.Client) -> dict[str, str]:
    """The URLs asked, named; names of airfoils and families found through the API."""
    first = client.get("/api/v1/polars", params={"limit": 100})
    total = int(first.headers["x-total-count"])
    # a page about half-way down the listing: follow the cursors 1000 rows at a time
    deep = "/api/v1/polars?limit=1000"
    for _ in range(max(0, total // 2000)):
        deep = client.get(deep).links["next"]["url"]
    deep = deep.replace("limit=1000", "limit=100")
    family = client.get("/api/v1/families", params={"limit": 1}).json()[0]["name"]
    airfoil = client.get("/api/v1/airfoils", params={"family": family, "limit": 1}).json()[0]
    return {
        "GET /api/v1/polars": "/api/v1/polars",
        "GET /api/v1/polars (page half-way)": deep,
        "GET /api/v1/polars?family=": f"/api/v1/polars?family={family}",
        "GET /api/v1/polars?airfoil=": f"/api/v1/polars?airfoil={airfoil['name']}",
        "GET /api/v1/polars?surface&review_state": (
            "/api/v1/polars?surface=rough&review_state=approved"),
        "GET /api/v1/airfoils": "/api/v1/airfoils",
        # the default page holds 20 airfoils at 1k polars and 100 at 50k: the same length
        # at both sizes shows the cost of the size alone
        "GET /api/v1/airfoils?limit=20": "/api/v1/airfoils?limit=20",
        "GET /api/v1/airfoils?family=": f"/api/v1/airfoils?family={family}",
        "GET /api/v1/airfoils/{name} (50 revisions)": f"/api/v1/airfoils/{airfoil['name']}",
        "GET /api/v1/families": "/api/v1/families",
        "GET /api/v1/families?limit=2": "/api/v1/families?limit=2",
        "GET /api/v1/blades": "/api/v1/blades",
        "GET /api/v1/audit": "/api/v1/audit?limit=100",
        "page /": "/",
        "page /?family=": f"/?family={family}",
        "page /?surface&review_state": "/?surface=rough&review_state=approved",
        "page /airfoils/{name}": f"/airfoils/{airfoil['name']}",
        "page /audit": "/audit",
    }


def measure(size: int, database: Path, repeats: int, workdir: Path) -> tuple[dict, float]:
    copy = workdir / f"catalogue-{size}.db"
    shutil.copyfile(database, copy)
    port = free_port()
    server = subprocess.Popen(
        [sys.executable, "-m", "polarsvc.cli", "--database-url", f"sqlite:///{copy}", "serve",
         "--host", "127.0.0.1", "--port", str(port), "--public-reads", "--log-level", "warning"],
        cwd=workdir, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
    )
    try:
        base = f"http://127.0.0.1:{port}"
        deadline = time.monotonic() + 120
        while True:
            try:
                if httpx.get(f"{base}/api/v1/health").status_code == 200:
                    break
            except httpx.TransportError:
                pass
            if server.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"server did not start: {server.stderr.read()}")
            time.sleep(0.1)
        results: dict[str, float] = {}
        with httpx.Client(base_url=base, timeout=120) as client:
            urls = requests_for(client)
            for name, url in urls.items():
                response = client.get(url)  # warm: caches, prepared statements
                assert response.status_code == 200, (url, response.status_code, response.text)
                samples = []
                for _ in range(repeats):
                    start = time.perf_counter()
                    response = client.get(url)
                    samples.append(time.perf_counter() - start)
                results[name] = 1e3 * statistics.median(samples)
        return results, rss_mb(server.pid)
    finally:
        server.terminate()
        server.wait(timeout=30)
        for suffix in ("", "-wal", "-shm"):
            Path(f"{copy}{suffix}").unlink(missing_ok=True)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", default="1000,50000")
    parser.add_argument("--repeats", type=int, default=15)
    parser.add_argument("--cache-dir", type=Path,
                        default=Path(tempfile.gettempdir()) / "polarsvc-bench-catalogue")
    parser.add_argument("--rebuild", action="store_true")
    args = parser.parse_args()
    sizes = [int(s) for s in args.sizes.split(",")]
    databases = {}
    for size in sizes:
        path = cache_path(args.cache_dir, size)
        if args.rebuild or not path.exists():
            start = time.perf_counter()
            build_catalogue(path, polars=size)
            print(f"built {size} polars in {time.perf_counter() - start:.0f} s: {path}")
        databases[size] = path
    workdir = Path(tempfile.mkdtemp(prefix="polarsvc-bench-catalogue-run-"))
    figures = {size: measure(size, databases[size], args.repeats, workdir) for size in sizes}
    shutil.rmtree(workdir, ignore_errors=True)
    print(f"listings, median of {args.repeats} requests on one connection, loopback; "
          f"load {os.getloadavg()[0]:.2f}")
    header = "".join(f"{size:>10d}" for size in sizes)
    ratio_title = f"  {sizes[-1]}/{sizes[0]}" if len(sizes) > 1 else ""
    print(f"  {'request':44s}{header} ms{ratio_title}")
    for name in figures[sizes[0]][0]:
        cells = "".join(f"{figures[size][0][name]:10.1f}" for size in sizes)
        ratio = (f"  {figures[sizes[-1]][0][name] / figures[sizes[0]][0][name]:6.2f}"
                 if len(sizes) > 1 else "")
        print(f"  {name:44s}{cells}   {ratio}")
    print("  server RSS after the run:" + "".join(
        f"  {size}: {figures[size][1]:.0f} MB" for size in sizes))
    return 0


if __name__ == "__main__":
    sys.exit(main())
