"""Benchmark of the blade-set path of :mod:`polarsvc.aero` (run:
``python benchmarks/bench_aero.py``).

Uses the demo family "skua" from seed_polars/ (synthetic, 42 polars) and the demo blade
"skerry-48" resampled to 50 stations, and times :func:`polarsvc.aero.build_blade_tables` on
a 0.5 deg grid (721 angles) with Viterna-Corrigan extension, Snel augmentation and Reynolds
and thickness interpolation: once from the raw members (extension and resampling of the 21
clean members included) and once from a prepared family (what the service caches).
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from demo_blade import demo_members, fifty_station_blade

from polarsvc import aero, recipes


def main(repeats: int = 50) -> None:
    members = demo_members()
    blade = fifty_station_blade()
    params = recipes.blade_set_params(blade)
    stations = recipes.blade_stations(blade, params)
    tsr = recipes.blade_tip_speed_ratio(blade, params)

    def timed(label: str, family: object) -> None:
        def run() -> aero.BladeTables:
            return aero.build_blade_tables(
                family,  # type: ignore[arg-type]
                stations,
                rotor_radius_m=float(blade["rotor_radius_m"]),
                tip_speed_ratio=tsr,
                grid_step_deg=0.5,
                rotation_model="snel",
            )

        tables = run()
        times_ms = []
        for _ in range(repeats):
            start = time.perf_counter()
            run()
            times_ms.append((time.perf_counter() - start) * 1e3)
        times_ms.sort()
        p90 = times_ms[min(len(times_ms) - 1, math.ceil(0.9 * len(times_ms)) - 1)]
        print(
            f"{label}: median {statistics.median(times_ms):.2f} ms, p90 {p90:.2f} ms "
            f"over {repeats} runs ({stations.size} stations x {tables.alpha_deg.size} angles)"
        )

    print(f"demo family skua ({len(members)} synthetic polars), blade skerry-48 at 50 stations")
    timed("build_blade_tables from raw members (extension + resampling included)", members)
    prepared = aero.prepare_family(members, grid_step_deg=0.5, surface="clean")
    timed("build_blade_tables from a prepared family (Re, t/c, rotation)", prepared)


if __name__ == "__main__":
    main()
