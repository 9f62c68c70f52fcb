"""Benchmark of the service's blade-set path (run: ``python benchmarks/bench_service.py``).

Prints medians of:

1. cache miss, server-side work (store reads, the numeric core, hashing, cache write) for a
   50-station blade on a 0.5 deg grid (721 angles, cl/cd/cm), against a plain script doing
   the same steps from the seed files (numpy.loadtxt, then polarsvc.aero);
2. cache hit as JSON over HTTP on loopback (a real uvicorn server), request plus decoding,
   against orjson encoding plus decoding of the same payload alone;
3. cache hit in the compact binary form.

The demo data (synthetic, seed_polars/) is used; the 50-station blade is the demo blade
resampled to 50 stations along the span.
"""

from __future__ import annotations

import socket
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path

import httpx
import numpy as np
import orjson
import uvicorn
from sqlalchemy.orm import sessionmaker

sys.path.insert(0, str(Path(__file__).resolve().parent))

from demo_blade import SEED, STATIONS, fifty_station_blade

from polarsvc import aero, pipeline, recipes
from polarsvc.api.app import create_app
from polarsvc.api.responses import BINARY_MEDIA_TYPE, decode_binary
from polarsvc.api.settings import Settings
from polarsvc.ingest import load_demo
from polarsvc.store import blades as blade_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, session_scope, upgrade_database

REPEATS = 20


def median_ms(samples: list[float]) -> float:
    return 1e3 * statistics.median(samples)


def plain_script(blade: dict) -> float:
    """The same steps from files, by hand: numpy.loadtxt per file, then the core."""
    start = time.perf_counter()
    members = []
    for path in sorted((SEED / "skua").glob("*_clean.csv")):
        lines = path.read_text().splitlines()
        meta = dict(line[2:].split(": ", 1) for line in lines if line.startswith("# ")
                    and ": " in line)
        rows = [line for line in lines if not line.startswith("#")][1:]
        table = np.loadtxt(rows, delimiter=",", ndmin=2)
        members.append(aero.Polar(table[:, 0], table[:, 1], table[:, 2], table[:, 3],
                                  reynolds=float(meta["reynolds"]),
                                  thickness=float(meta["thickness"]), assume_degrees=True))
    recipes.build_blade_set(members, blade, recipes.blade_set_params(blade))
    return time.perf_counter() - start


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def main() -> int:
    workdir = Path(tempfile.mkdtemp(prefix="polarsvc-bench-"))
    url = f"sqlite:///{workdir / 'bench.db'}"
    engine = make_engine(url)
    upgrade_database(engine)
    factory = sessionmaker(engine, expire_on_commit=False)
    load_demo(factory, SEED, actor=SYSTEM_ACTOR)
    blade = fifty_station_blade()
    with session_scope(factory, write=True) as session:
        blade_store.store_blade(session, name=blade["name"], definition=blade,
                                actor=SYSTEM_ACTOR)

    misses = []
    for index in range(REPEATS):
        options = {"wind_speed_m_s": 10.0 + 1e-6 * index}  # a new recipe each time: a miss
        start = time.perf_counter()
        served = pipeline.blade_set(factory, blade_key=blade["name"], options=options,
                                    approved_only=False)
        misses.append(time.perf_counter() - start)
        assert not served.cached and served.columns["cl"].shape == (STATIONS, 721)
    baseline = [plain_script(blade) for _ in range(REPEATS)]

    port = free_port()
    app = create_app(Settings(database_url=url, public_reads=True))
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=port, log_level="error"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    while not server.started:
        time.sleep(0.05)
    base = f"http://127.0.0.1:{port}/api/v1/blades/{blade['name']}/tables"
    json_hits, bin_hits, codec = [], [], []
    with httpx.Client() as client:
        client.get(base)  # fills the cache for the default recipe
        for _ in range(REPEATS):
            start = time.perf_counter()
            response = client.get(base)
            document = orjson.loads(response.content)
            json_hits.append(time.perf_counter() - start)
            assert response.headers["x-polarsvc-cache"] == "hit"
        payload = {**document, **{k: np.asarray(document[k]) for k in ("alpha_deg", "cl", "cd",
                                                                          "cm")}}
        for _ in range(REPEATS):
            start = time.perf_counter()
            orjson.loads(orjson.dumps(payload, option=orjson.OPT_SERIALIZE_NUMPY))
            codec.append(time.perf_counter() - start)
        for _ in range(REPEATS):
            start = time.perf_counter()
            response = client.get(base, headers={"Accept": BINARY_MEDIA_TYPE})
            arrays, _ = decode_binary(response.content)
            bin_hits.append(time.perf_counter() - start)
            assert arrays["cl"].shape == (STATIONS, 721)
        json_size = len(orjson.dumps(payload, option=orjson.OPT_SERIALIZE_NUMPY))
        bin_size = len(response.content)
    server.should_exit = True
    thread.join(timeout=10)
    engine.dispose()

    print(f"blade set: {STATIONS} stations x 721 angles x cl/cd/cm, SQLite, {REPEATS} runs each")
    print(f"  cache miss, server-side work:          median {median_ms(misses):7.1f} ms")
    print(f"  plain script from files (loadtxt+core): median {median_ms(baseline):7.1f} ms")
    print(f"  cache hit, JSON over HTTP + decode:     median {median_ms(json_hits):7.1f} ms "
          f"({json_size / 1e6:.2f} MB)")
    print(f"  orjson encode + decode alone:           median {median_ms(codec):7.1f} ms")
    print(f"  cache hit, binary over HTTP + decode:   median {median_ms(bin_hits):7.1f} ms "
          f"({bin_size / 1e6:.2f} MB)")
    ratio = statistics.median(json_hits) / statistics.median(codec)
    print(f"  JSON hit / orjson codec ratio: {ratio:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
