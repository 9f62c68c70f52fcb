"""Benchmark of the rotor layer and the rotor endpoint (run: ``python benchmarks/bench_rotor.py``).

Measured in one run, interleaved, so the ratios hold on a shared machine:

1. Cp of the demo blade (20 stations) at 57 tip speed ratios (1..15 step 0.25), fine pitch:
   :func:`polarsvc.rotor.solve` (all stations and operating points in one array solve)
   against a plain loop solving each station with ``scipy.optimize.brentq`` on Ning's
   residual written with ``math`` and ``numpy.interp`` (same brackets, same tolerance
   class), integrated the same way;
2. a full power curve plus annual energy (:func:`polarsvc.performance.compute_performance`:
   Cp surface with refined maximum, Cp(lambda), rated wind speed, pitch to hold rated
   power, spanwise solution at every curve speed, Rayleigh energy for the IEC classes)
   against the same computation with every BEM solve (``PreparedRotor.solve`` and
   ``PreparedRotor.coefficients``) done by the plain per-station loop;
3. cold requests of ``GET /blades/skerry-48/performance`` to a real uvicorn server on
   loopback: the blade set is cached, the rotor result is not (each request changes the air
   density by 1e-9 kg/m^3, so each is a new recipe), response received as JSON.

Besides wall-clock times it prints the CPU time this process spent (``time.process_time``;
the server runs in a thread of this process), which a machine shared with other jobs
inflates far less than the wall clock.

Demo data: seed_polars/ (synthetic). Options: ``--repeats N`` (default 9).
"""

from __future__ import annotations

import argparse
import math
import os
import socket
import statistics
import sys
import tempfile
import threading
import time
from pathlib import Path
from unittest import mock

import httpx
import numpy as np
import uvicorn
from scipy import optimize

sys.path.insert(0, str(Path(__file__).resolve().parent))

from demo_blade import SEED, demo_members

from polarsvc import performance, recipes, rotor
from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings
from polarsvc.ingest import load_demo
from polarsvc.rotor import bem
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, make_session_factory, upgrade_database


def median_ms(samples: list[float]) -> float:
    return 1e3 * statistics.median(samples)


def _prandtl(f: float) -> float:
    return 2.0 / math.pi * math.acos(math.exp(-f))


def plain_station(lam_r, sigma, theta, tip, hub, alpha, cl, cd, tip_loss, hub_loss):
    """One station by Ning's procedure: brackets (0, pi/2], (-pi/4, 0), (pi/2, pi) and
    scipy.optimize.brentq on the residual; returns phi, a, a', cn, ct, F."""

    def state(phi):
        s, c = math.sin(phi), math.cos(phi)
        a_deg = math.degrees(phi - theta)
        a_deg = (a_deg + 180.0) % 360.0 - 180.0
        cl_s = float(np.interp(a_deg, alpha, cl))
        cd_s = float(np.interp(a_deg, alpha, cd))
        cn, ct = cl_s * c + cd_s * s, cl_s * s - cd_s * c
        F = 1.0
        if tip_loss:
            F *= _prandtl(tip / abs(s))
        if hub_loss:
            F *= _prandtl(hub / abs(s))
        k = sigma * cn / (4 * F * s * s)
        kp_cos = sigma * ct / (4 * F * s)
        if phi > 0:
            if k <= 2.0 / 3.0:
                axial, a = s * (1 + k), k / (1 + k)
            else:
                g1 = 2 * F * k - (10 / 9 - F)
                g2 = 2 * F * k - F * (4 / 3 - F)
                g3 = 2 * F * k - (25 / 9 - 2 * F)
                a = 1 - 1 / (2 * math.sqrt(g2)) if abs(g3) < 1e-6 else (g1 - math.sqrt(g2)) / g3
                axial = s / (1 - a)
        else:
            a = k / (k - 1)
            axial = s * (1 - k)
        return axial - (c - kp_cos) / lam_r, a, kp_cos, cn, ct, F

    def f(phi):
        return state(phi)[0]

    eps = 1e-6
    if f(eps) * f(math.pi / 2) <= 0:
        low, high = eps, math.pi / 2
    elif f(-math.pi / 4) < 0 < f(-eps):
        low, high = -math.pi / 4, -eps
    else:
        low, high = math.pi / 2, math.pi - eps
    phi = optimize.brentq(f, low, high, xtol=1e-15, rtol=4 * np.finfo(float).eps)
    _, a, kp_cos, cn, ct, F = state(phi)
    kp = kp_cos / math.cos(phi)
    return phi, a, kp / (1 - kp), cn, ct, F


def plain_solve(geometry, alpha_deg, cl, cd, tip_speed_ratio, pitch_deg=0.0, *,
                tip_loss=True, hub_loss=True, tangential_induction=True, high_thrust=True,
                wind_speed_m_s=None, rho_kg_m3=bem.ISA_DENSITY_KG_M3) -> bem.BemResult:
    """:func:`polarsvc.rotor.solve` done by a loop over operating points and stations."""
    tsr, pitch = np.broadcast_arrays(np.asarray(tip_speed_ratio, float),
                                     np.asarray(pitch_deg, float))
    shape = tsr.shape
    tsr, pitch = tsr.ravel(), pitch.ravel()
    g = geometry
    r, R, Rh, B = g.radius_m, g.rotor_radius_m, g.hub_radius_m, g.blade_count
    n, m = g.size, tsr.size
    cl = np.broadcast_to(np.asarray(cl, float), (n, len(alpha_deg)))
    cd = np.broadcast_to(np.asarray(cd, float), (n, len(alpha_deg)))
    out = {k: np.zeros((m, n)) for k in ("a", "ap", "phi", "alpha", "cl", "cd", "F", "fn",
                                          "ft")}
    for i in range(m):
        for j in range(n):
            tip = B / 2 * (R - r[j]) / r[j]
            hub = B / 2 * (r[j] - Rh) / Rh
            theta = math.radians(g.twist_deg[j] + pitch[i])
            lam_r = tsr[i] * r[j] / R
            if (tip_loss and tip <= 0) or (hub_loss and hub <= 0):
                out["phi"][i, j] = math.atan2(1.0, lam_r)
                continue
            phi, a, ap, cn, ct, F = plain_station(
                lam_r, g.solidity[j], theta, tip, hub, alpha_deg, cl[j], cd[j], tip_loss,
                hub_loss,
            )
            w2 = (1 - a) ** 2 + (lam_r * (1 + ap)) ** 2
            out["a"][i, j], out["ap"][i, j], out["phi"][i, j], out["F"][i, j] = a, ap, phi, F
            out["fn"][i, j], out["ft"][i, j] = g.chord_m[j] * cn * w2, g.chord_m[j] * ct * w2
    area = math.pi * R**2
    trap = bem._trapezoid
    ct_rotor = B * trap(out["fn"], r) / area
    cq = B * trap(out["ft"] * r, r) / (area * R)
    q = np.ones(m) if wind_speed_m_s is None else 0.5 * rho_kg_m3 * np.broadcast_to(
        np.asarray(wind_speed_m_s, float), shape).ravel() ** 2
    fn, ft = out["fn"] * q[:, None], out["ft"] * q[:, None]
    alpha = np.degrees(out["phi"]) - g.twist_deg - pitch[:, None]
    options = {"tip_loss": tip_loss, "hub_loss": hub_loss,
               "tangential_induction": tangential_induction, "high_thrust": high_thrust}
    zeros = np.zeros((m, n))
    return bem.BemResult(
        tsr.reshape(shape), pitch.reshape(shape), (tsr * cq).reshape(shape),
        ct_rotor.reshape(shape), cq.reshape(shape),
        trap(fn * (r - Rh), r).reshape(shape), trap(ft * (r - Rh), r).reshape(shape),
        out["a"], out["ap"], np.degrees(out["phi"]), alpha, zeros, zeros, out["F"], fn, ft,
        zeros, zeros.astype(np.int8), zeros.astype(np.int64), zeros.astype(bool),
        "N/m" if wind_speed_m_s is not None else "per unit dynamic pressure", "", r,
        options, tuple(bem.assumptions(**options)),
    )


def plain_prepared_solve(self, tip_speed_ratio, pitch_deg=0.0, *, wind_speed_m_s=None,
                         rho_kg_m3=bem.ISA_DENSITY_KG_M3) -> bem.BemResult:
    """:meth:`polarsvc.rotor.bem.PreparedRotor.solve` done by :func:`plain_solve`."""
    alpha, cl, cd = self.inputs
    return plain_solve(self.geometry, alpha, cl, cd, tip_speed_ratio, pitch_deg,
                       wind_speed_m_s=wind_speed_m_s, rho_kg_m3=rho_kg_m3, **self.options)


def plain_coefficients(self, tip_speed_ratio, pitch_deg=0.0):
    """:meth:`polarsvc.rotor.bem.PreparedRotor.coefficients` done by :func:`plain_solve`."""
    result = plain_prepared_solve(self, tip_speed_ratio, pitch_deg)
    return result.cp, result.ct, 0.0


def demo_inputs() -> tuple[dict, np.ndarray, np.ndarray, np.ndarray]:
    import json

    blade = json.loads((SEED / "skerry-48.json").read_text())
    tables = recipes.build_blade_set(demo_members(), blade, recipes.blade_set_params(blade))
    return blade, tables.alpha_deg, tables.columns["cl"], tables.columns["cd"]


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


def cold_requests(repeats: int) -> tuple[list[float], float, list[float]]:
    """Cold rotor requests on a cached blade set, over HTTP to a real server."""
    folder = tempfile.mkdtemp(prefix="bench-rotor-")
    url = f"sqlite:///{folder}/bench.db"
    engine = make_engine(url)
    upgrade_database(engine)
    load_demo(make_session_factory(engine), SEED, actor=SYSTEM_ACTOR)
    engine.dispose()
    app = create_app(Settings(database_url=url, public_reads=True))
    port = free_port()
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=port, log_level="error"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    base = f"http://127.0.0.1:{port}/api/v1"
    samples: list[float] = []
    cpu_samples: list[float] = []
    try:
        with httpx.Client(timeout=120) as client:
            while True:
                try:
                    client.get(base + "/health")
                    break
                except httpx.HTTPError:
                    time.sleep(0.1)
            start = time.perf_counter()
            first = client.get(base + "/blades/skerry-48/performance")
            first_s = time.perf_counter() - start
            assert first.status_code == 200, first.text
            for i in range(repeats):
                cpu = time.process_time()
                start = time.perf_counter()
                answer = client.get(base + "/blades/skerry-48/performance",
                                    params={"rho_kg_m3": 1.225 + (i + 1) * 1e-9})
                samples.append(time.perf_counter() - start)
                cpu_samples.append(time.process_time() - cpu)
                assert answer.headers["x-polarsvc-cache"] == "miss"
    finally:
        server.should_exit = True
        thread.join(timeout=10)
    return samples, first_s, cpu_samples


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=9)
    args = parser.parse_args()
    blade, alpha, cl, cd = demo_inputs()
    geometry = performance.geometry(blade)
    params = performance.rotor_params(blade)
    tsr = np.linspace(1.0, 15.0, 57)
    fine = -2.5

    fast_cp, plain_cp, fast_curve, plain_curve = [], [], [], []
    fast_curve_cpu: list[float] = []
    for _ in range(args.repeats):
        start = time.perf_counter()
        vectorised = rotor.solve(geometry, alpha, cl, cd, tsr, fine)
        fast_cp.append(time.perf_counter() - start)
        start = time.perf_counter()
        looped = plain_solve(geometry, alpha, cl, cd, tsr, fine)
        plain_cp.append(time.perf_counter() - start)
    np.testing.assert_allclose(vectorised.cp, looped.cp, atol=1e-10)
    for _ in range(max(3, args.repeats // 3)):
        cpu = time.process_time()
        start = time.perf_counter()
        arrays, _ = performance.compute_performance(alpha, cl, cd, blade, params)
        fast_curve.append(time.perf_counter() - start)
        fast_curve_cpu.append(time.process_time() - cpu)
        start = time.perf_counter()
        with mock.patch.object(bem.PreparedRotor, "solve", plain_prepared_solve), \
                mock.patch.object(bem.PreparedRotor, "coefficients", plain_coefficients):
            reference, _ = performance.compute_performance(alpha, cl, cd, blade, params)
        plain_curve.append(time.perf_counter() - start)
    np.testing.assert_allclose(arrays["annual_energy_wh"], reference["annual_energy_wh"],
                               rtol=1e-6)
    cold, first, cold_cpu = cold_requests(args.repeats)
    load = os.getloadavg()
    print(f"load average (1, 5, 15 min): {load[0]:.2f} {load[1]:.2f} {load[2]:.2f}; "
          f"{os.cpu_count()} cores; repeats {args.repeats}")
    rows = [
        ("Cp, 57 tip speed ratios x 20 stations: rotor.solve", fast_cp),
        ("Cp, same, per-station brentq loop", plain_cp),
        ("power curve + annual energy: performance.compute_performance", fast_curve),
        ("power curve + annual energy, BEM by the brentq loop", plain_curve),
        ("cold GET /blades/skerry-48/performance (blade set cached), HTTP", cold),
        ("  CPU time of this process: compute_performance", fast_curve_cpu),
        ("  CPU time of this process (server and client): cold GET", cold_cpu),
    ]
    for label, samples in rows:
        print(f"{label:70s} median {median_ms(samples):9.2f} ms  (min {1e3 * min(samples):.2f})")
    cp_ratio = statistics.median(plain_cp) / statistics.median(fast_cp)
    print(f"ratio loop/vectorised, Cp: {cp_ratio:.1f}x")
    print(f"ratio loop/vectorised, power curve + energy: "
          f"{statistics.median(plain_curve) / statistics.median(fast_curve):.1f}x")
    print(f"first request (blade set computed too): {1e3 * first:.1f} ms")
    return 0


if __name__ == "__main__":
    sys.exit(main())
