"""Benchmark of the service's blade-set path (run: ``python benchmarks/bench_service.py``).

Everything is measured in one run, interleaved, so ratios hold on a shared machine:

1. cache miss, server-side work (store reads, the numeric core, hashing, the durable cache
   write) for blades of 50 and 200 stations on a 0.5 deg grid (721 angles, cl/cd/cm),
   against a plain script doing the same steps from the seed files (numpy.loadtxt, then
   polarsvc.aero); miss and script alternate, and the ratio of medians is printed;
2. cache hits over HTTP on loopback (a real uvicorn server) for 20 and 200 stations: the
   request (body received) in JSON, CSV, Arrow IPC and .npz, with ratios CSV/JSON and
   Arrow/JSON, and the client's decoding of each apart (orjson, numpy.loadtxt, pyarrow,
   numpy.load);
3. Arrow IPC against the former home-made binary container (a JSON header plus raw
   float64): per-hit encoding (from the table cached per content hash, metadata added)
   plus decoding of the same arrays in memory, to justify the choice.

The demo data (synthetic, seed_polars/) is used; the blades are the demo blade resampled.
Options: ``--repeats N`` (default 15).
"""

from __future__ import annotations

import argparse
import io
import socket
import statistics
import struct
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

from demo_blade import SEED, station_blade

from polarsvc import aero, pipeline, recipes
from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.formats.binary import (
    ARROW_MEDIA_TYPE,
    arrow_table,
    decode_arrow,
    decode_npz,
    write_arrow,
)
from polarsvc.ingest import load_demo
from polarsvc.store import blades as blade_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, session_scope, upgrade_database


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


def home_made_encode(arrays: dict[str, np.ndarray], meta: dict) -> bytes:
    """The former container: magic, header length, JSON header, raw float64 arrays."""
    entries, chunks, offset = [], [], 0
    for name, array in arrays.items():
        data = np.ascontiguousarray(array, dtype="<f8")
        entries.append({"name": name, "shape": list(data.shape), "offset": offset})
        chunks.append(data.tobytes())
        offset += data.nbytes
    header = orjson.dumps({"arrays": entries, "meta": meta}, option=orjson.OPT_SERIALIZE_NUMPY)
    return b"".join([b"PSVTB1", struct.pack("<I", len(header)), header, *chunks])


def home_made_decode(payload: bytes) -> dict[str, np.ndarray]:
    (length,) = struct.unpack_from("<I", payload, 6)
    header = orjson.loads(payload[10 : 10 + length])
    start = 10 + length
    return {
        e["name"]: np.frombuffer(payload, "<f8", int(np.prod(e["shape"])),
                                 start + e["offset"]).reshape(e["shape"])
        for e in header["arrays"]
    }


def misses(factory, blades: dict[int, dict], repeats: int) -> dict[int, tuple[list, list]]:
    results: dict[int, tuple[list, list]] = {n: ([], []) for n in blades}
    for index in range(repeats):
        for count, blade in blades.items():
            # a new recipe, hence a miss: operating points are rounded to 5 significant
            # digits before they enter a recipe (PARAMETER_PRECISION), so steps of 0.01 m/s
            options = {"wind_speed_m_s": 10.0 + 0.01 * index}
            start = time.perf_counter()
            served = pipeline.blade_set(factory, blade_key=blade["name"], options=options,
                                        approved_only=False)
            results[count][0].append(time.perf_counter() - start)
            assert not served.cached and served.columns["cl"].shape == (count, 721)
            results[count][1].append(plain_script(blade))
    return results


def http_hits(base: str, blades: dict[int, dict], repeats: int) -> dict:
    out: dict = {}
    with httpx.Client(timeout=120) as client:
        for count, blade in blades.items():
            url = f"{base}/api/v1/blades/{blade['name']}/tables"
            decoders = {
                "json": lambda r: orjson.loads(r.content),
                "csv": lambda r: np.loadtxt(
                    [x for x in io.StringIO(r.text) if not x.startswith("#")][1:],
                    delimiter=","),
                "arrow": lambda r: decode_arrow(r.content),
                "npz": lambda r: decode_npz(r.content),
            }
            for fmt in decoders:  # fill the caches
                assert client.get(url, params={"format": fmt}).status_code == 200
            times: dict[str, list[float]] = {f: [] for f in decoders}
            decoding: dict[str, list[float]] = {f: [] for f in decoders}
            sizes: dict[str, int] = {}
            for _ in range(repeats):
                for fmt, decode in decoders.items():
                    start = time.perf_counter()
                    response = client.get(url, params={"format": fmt})
                    times[fmt].append(time.perf_counter() - start)
                    start = time.perf_counter()
                    decode(response)
                    decoding[fmt].append(time.perf_counter() - start)
                    assert response.headers["x-polarsvc-cache"] == "hit"
                    sizes[fmt] = len(response.content)
            out[count] = (times, decoding, sizes)
            # in memory: Arrow against the former home-made container
            document = orjson.loads(client.get(url).content)
            arrays = {k: np.asarray(document[k]) for k in ("alpha_deg", "cl", "cd", "cm")}
            meta = {k: v for k, v in document.items() if k not in arrays}
            codec: dict[str, list[float]] = {"arrow": [], "home-made": []}
            radii = [s["radius_m"] for s in meta["reports"]["stations"]]
            cached = arrow_table(arrays["alpha_deg"], {k: arrays[k] for k in ("cl", "cd", "cm")},
                                 radius_m=radii)  # as the server caches it per content hash
            for _ in range(repeats):
                start = time.perf_counter()
                decode_arrow(write_arrow(cached, meta))
                codec["arrow"].append(time.perf_counter() - start)
                start = time.perf_counter()
                home_made_decode(home_made_encode(arrays, meta))
                codec["home-made"].append(time.perf_counter() - start)
            out[(count, "codec")] = codec
    return out


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=15)
    repeats = parser.parse_args().repeats
    workdir = Path(tempfile.mkdtemp(prefix="polarsvc-bench-"))
    url = f"sqlite:///{workdir / 'bench.db'}"
    engine = make_engine(url)
    upgrade_database(engine)
    factory = sessionmaker(engine, expire_on_commit=False)
    load_demo(factory, SEED, actor=SYSTEM_ACTOR)
    blades = {n: station_blade(n) for n in (20, 50, 200)}
    with session_scope(factory, write=True) as session:
        for blade in blades.values():
            blade_store.store_blade(session, name=blade["name"], definition=blade,
                                    actor=SYSTEM_ACTOR)

    miss = misses(factory, {n: blades[n] for n in (50, 200)}, repeats)

    port = free_port()
    app = create_app(Settings(database_url=url, public_reads=True))
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=port, log_level="error"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    while not server.started:
        time.sleep(0.05)
    hits = http_hits(f"http://127.0.0.1:{port}", {n: blades[n] for n in (20, 200)}, repeats)
    server.should_exit = True
    thread.join(timeout=10)
    engine.dispose()

    print(f"blade sets, 721 angles x cl/cd/cm, SQLite, {repeats} runs each, interleaved")
    for count, (served, script) in miss.items():
        ratio = statistics.median(served) / statistics.median(script)
        print(f"  {count:3d} stations: cache miss {median_ms(served):7.1f} ms, plain script "
              f"{median_ms(script):7.1f} ms, miss/script {ratio:.2f}")
    for count in (20, 200):
        times, decoding, sizes = hits[count]
        print(f"  {count:3d} stations, cache hit: request over HTTP (median), size, and the "
              "client's decoding apart:")
        for fmt, samples in times.items():
            print(f"      {fmt:5s} {median_ms(samples):7.1f} ms  {sizes[fmt] / 1e6:6.2f} MB"
                  f"   decode {median_ms(decoding[fmt]):7.1f} ms")
        json_median = statistics.median(times["json"])
        print(f"      csv/json {statistics.median(times['csv']) / json_median:.2f}  "
              f"arrow/json {statistics.median(times['arrow']) / json_median:.2f}")
        codec = hits[(count, "codec")]
        print(f"      per hit in memory, encode+decode: arrow {median_ms(codec['arrow']):.2f} ms, "
              f"former home-made container {median_ms(codec['home-made']):.2f} ms")
    print(f"(Arrow media type {ARROW_MEDIA_TYPE})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
