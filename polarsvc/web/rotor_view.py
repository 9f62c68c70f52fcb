"""What the blade page shows of the rotor: performance of the blade's default blade set,
the spanwise solution at a chosen wind speed, and a comparison with the same blade
prepared another way."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np
from sqlalchemy.orm import Session, sessionmaker

from polarsvc import performance, pipeline
from polarsvc.aero.errors import AeroError
from polarsvc.pipeline import CachePolicy, ServedTable
from polarsvc.store.errors import NotFound

COMPARISONS = {
    "none": "no comparison",
    "rotation-none": "without rotational augmentation",
    "rotation-du-selig": "Du-Selig rotational augmentation",
    "rotation-chaviaropoulos-hansen": "Chaviaropoulos-Hansen rotational augmentation",
    "approved-only": "approved revisions only",
    "no-tip-loss": "without Prandtl tip and hub loss",
}
"""How the page can prepare the second blade set of a comparison."""


def _options(clamp: bool, variant: str) -> tuple[dict[str, Any], dict[str, Any], bool | None]:
    options: dict[str, Any] = {"clamp": clamp}
    rotor: dict[str, Any] = {}
    approved: bool | None = None
    if variant.startswith("rotation-"):
        options["rotation"] = {"model": variant.removeprefix("rotation-")}
    elif variant == "approved-only":
        approved = True
    elif variant == "no-tip-loss":
        rotor = {"tip_loss": False, "hub_loss": False}
    return options, rotor, approved


@dataclass
class RotorView:
    """Rotor result of a blade (``result``), the wind speed of the spanwise plots, the
    comparison chosen (``other``, ``comparison``) and problems to show."""

    result: ServedTable | None
    loads_at_m_s: float | None
    compare: str
    other: ServedTable | None
    comparison: dict[str, Any] | None
    problems: list[str]

    @property
    def arrays(self) -> dict[str, np.ndarray]:
        return self.result.columns if self.result is not None else {}

    def facts(self) -> dict[str, Any]:
        if self.result is None:
            return {}
        a = self.arrays
        rated = float(a["rated_wind_speed_m_s"][0])
        return {
            "best_tip_speed_ratio": float(a["optimum"][0]),
            "fine_pitch_deg": float(a["optimum"][1]),
            "cp_max": float(a["optimum"][2]),
            "rated_wind_speed_m_s": rated if math.isfinite(rated) else None,
            "energy": list(zip(self.result.reports["distributions"],
                               (a["annual_energy_wh"] / 1e6).tolist(),
                               a["capacity_factor"].tolist(), strict=True)),
        }

    def loads(self) -> tuple[int, dict[str, np.ndarray]] | None:
        if self.result is None or self.loads_at_m_s is None:
            return None
        return performance.station_solution_at(self.arrays, self.loads_at_m_s)


def rotor_view(
    factory: sessionmaker[Session],
    blade_hash: str,
    params: Any,
    *,
    clamp: bool,
    approved_only: bool,
    policy: CachePolicy,
) -> RotorView:
    """The rotor result of the blade's default blade set (``clamp`` as the page's tables),
    ``loads_at`` (query, m/s; default the rated wind speed) and ``compare`` (query, a key of
    :data:`COMPARISONS`)."""
    problems: list[str] = []
    compare = params.get("compare") or "none"
    if compare not in COMPARISONS:
        problems.append(f"compare={compare!r} is not known; showing no comparison")
        compare = "none"
    result = other = comparison = None
    try:
        options, rotor, _ = _options(clamp, "none")
        result = pipeline.rotor_performance(
            factory, blade_key=blade_hash, options=options, rotor_options=rotor,
            approved_only=approved_only, policy=policy,
        )
    except (AeroError, NotFound, KeyError) as exc:
        problems.append(f"rotor performance: {exc}")
    loads_at = None
    if result is not None:
        rated = float(result.columns["rated_wind_speed_m_s"][0])
        text = params.get("loads_at")
        try:
            loads_at = float(text) if text else (rated if math.isfinite(rated) else 10.0)
        except ValueError:
            problems.append(f"loads_at={text!r} is not a number; showing rated wind speed")
            loads_at = rated if math.isfinite(rated) else 10.0
        if compare != "none":
            try:
                options, rotor, approved = _options(clamp, compare)
                other = pipeline.rotor_performance(
                    factory, blade_key=blade_hash, options=options, rotor_options=rotor,
                    approved_only=approved if approved is not None else approved_only,
                    policy=policy,
                )
                comparison = pipeline.compare_performance(result, other)
            except (AeroError, NotFound, KeyError) as exc:
                problems.append(f"comparison ({COMPARISONS[compare]}): {exc}")
    return RotorView(result, loads_at, compare, other, comparison, problems)
