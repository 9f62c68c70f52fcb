"""Rotor performance of a blade set (steady BEM, power curve, annual energy) and the
comparison of two blade sets."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends, Query, Request
from pydantic import Field

from polarsvc import performance, pipeline, recipes
from polarsvc.aero.errors import ParameterError
from polarsvc.api.deps import Reader, SettingsDep
from polarsvc.api.responses import arrays_response, choose_format, json_response
from polarsvc.api.routers.blades import BladeSetQuery
from polarsvc.api.routers.polars import ApprovedOnlyQuery, FormatQuery, approved_only_setting
from polarsvc.api.schemas import (
    ERROR_RESPONSES,
    TABLE_RESPONSES,
    BladeSetSpec,
    ComparisonIn,
    ComparisonPartQuery,
    RotorPartQuery,
)
from polarsvc.api.served import cache_policy, served_response
from polarsvc.rotor.power import MIN_RATED_POWER_W

router = APIRouter(tags=["rotor performance"], responses=ERROR_RESPONSES)

PERFORMANCE_DESCRIPTION = (
    "Steady blade-element momentum solution of the rotor with the blade set's station "
    "tables (Ning 2014 residual, Prandtl tip and hub loss, Buhl high-thrust relation): a "
    "Cp and Ct surface over tip speed ratio and pitch with its maximum, Cp along the tip "
    "speed ratio at the fine pitch, the power curve of a variable-speed pitch-regulated "
    "machine (turbine data from the blade definition, overridable here), the spanwise "
    "solution at every wind speed of the curve, and the annual energy for Rayleigh winds "
    "of the IEC 61400-1 class mean speeds and for the Weibull distributions given, and the "
    "station Reynolds numbers met over the power curve against those the tables were "
    "prepared for (reports.reynolds, reports.warnings). JSON and binary carry every array "
    "(names and units in reports.arrays), or one part as columns with `part`; CSV carries "
    "one part (curve by default; cp, cp_lambda, stations, energy, optimum, reynolds). A "
    "screening check, not a load calculation: see rotor_caution and reports.assumptions."
)


Shape = Annotated[float, Field(gt=0, le=20, allow_inf_nan=False)]
Speed = Annotated[float, Field(gt=0, le=100, allow_inf_nan=False)]


def rotor_query(
    tip_loss: bool = True,
    hub_loss: bool = True,
    tangential_induction: bool = True,
    high_thrust: Annotated[bool, Query(description="Buhl's relation above a = 0.4")] = True,
    rated_power_w: Annotated[float | None, Query(ge=MIN_RATED_POWER_W)] = None,
    min_rotor_speed_rpm: Annotated[float | None, Query(ge=0, le=1000)] = None,
    max_rotor_speed_rpm: Annotated[float | None, Query(gt=0, le=1000)] = None,
    efficiency: Annotated[float | None, Query(gt=0, le=1)] = None,
    cut_in_m_s: Annotated[float | None, Query(gt=0, le=100)] = None,
    cut_out_m_s: Annotated[float | None, Query(gt=0, le=100)] = None,
    rho_kg_m3: Annotated[float | None, Query(gt=0, le=5)] = None,
    weibull_k: Annotated[
        list[Shape], Query(max_length=10, description="Weibull shapes k")
    ] = [],  # noqa: B006
    weibull_a_m_s: Annotated[
        list[Speed], Query(max_length=10, description="Weibull scales A, one per shape")
    ] = [],  # noqa: B006
    loads_at_m_s: Annotated[
        list[Speed], Query(max_length=20, description="wind speeds added to the curve")
    ] = [],  # noqa: B006
) -> dict[str, Any]:
    """Rotor settings of a request: the keywords of
    :func:`polarsvc.performance.rotor_params`."""
    if len(weibull_k) != len(weibull_a_m_s):
        raise ParameterError("weibull_a_m_s", "needs one scale per weibull_k")
    return {
        "tip_loss": tip_loss,
        "hub_loss": hub_loss,
        "tangential_induction": tangential_induction,
        "high_thrust": high_thrust,
        "turbine": {
            "rated_power_w": rated_power_w,
            "min_rotor_speed_rpm": min_rotor_speed_rpm,
            "max_rotor_speed_rpm": max_rotor_speed_rpm,
            "efficiency": efficiency,
            "cut_in_m_s": cut_in_m_s,
            "cut_out_m_s": cut_out_m_s,
            "rho_kg_m3": rho_kg_m3,
        },
        "weibull": [[k, a] for k, a in zip(weibull_k, weibull_a_m_s, strict=True)],
        "extra_wind_speeds_m_s": list(loads_at_m_s),
    }


RotorQuery = Annotated[dict[str, Any], Depends(rotor_query)]


@router.get("/blades/{key}/performance", summary="Rotor performance of a blade set",
            description=PERFORMANCE_DESCRIPTION, responses=TABLE_RESPONSES)
def blade_performance(
    key: str, request: Request, settings: SettingsDep, reader: Reader, options: BladeSetQuery,
    rotor: RotorQuery,
    format: FormatQuery = None,
    part: RotorPartQuery = None,
    approved_only: ApprovedOnlyQuery = None,
):
    fmt = choose_format(request, format)
    served = pipeline.rotor_performance(
        request.app.state.session_factory, blade_key=key, options=options,
        rotor_options=rotor, approved_only=approved_only_setting(settings, approved_only),
        policy=cache_policy(settings, reader),
    )
    return served_response(request, served, fmt, part)


def spec_options(spec: BladeSetSpec) -> tuple[dict[str, Any], dict[str, Any]]:
    """Blade-set and rotor keywords of one side of a comparison."""
    options = {
        "surface": spec.surface,
        "thickness_method": spec.thickness_method,
        "clamp": spec.clamp,
        "extension": recipes.extension_params(
            method=spec.extension_method, aspect_ratio=spec.aspect_ratio, cd_max=spec.cd_max
        ),
        "rotation": {"model": spec.rotation_model},
        "step_deg": recipes.DEFAULT_STEP_DEG,
        "wind_speed_m_s": spec.wind_speed_m_s,
        "rotor_speed_rpm": spec.rotor_speed_rpm,
    }
    rotor = spec.rotor
    turbine = rotor.turbine.model_dump(exclude={"notes"}) if rotor.turbine else {}
    rotor_options = {
        "tip_loss": rotor.tip_loss,
        "hub_loss": rotor.hub_loss,
        "tangential_induction": rotor.tangential_induction,
        "high_thrust": rotor.high_thrust,
        "turbine": turbine,
        "weibull": [list(pair) for pair in rotor.weibull],
        "extra_wind_speeds_m_s": list(rotor.loads_at_m_s),
    }
    return options, rotor_options


@router.post(
    "/performance/compare",
    responses=TABLE_RESPONSES,
    summary="Compare the rotor performance of two blade sets (b minus a)",
    description=(
        "Both results are computed (or taken from the cache) as by GET "
        "/blades/{key}/performance and stay retrievable by their hashes. The answer holds "
        "delta Cp along the tip speed ratio, delta power curve, delta annual energy (MWh and "
        "%), thrust and root moments at rated wind speed (each at its own), and what differs "
        "between the two recipes and their inputs. JSON by default; CSV and the binary "
        "forms carry the arrays as parts (`part`: curve, cp_lambda, energy, rated; CSV "
        "the curve by default, binary every part) with the rest as metadata."
    ),
)
def compare(body: ComparisonIn, request: Request, settings: SettingsDep, reader: Reader,
            format: FormatQuery = None, part: ComparisonPartQuery = None):
    fmt = choose_format(request, format)
    factory = request.app.state.session_factory
    served = []
    for spec in (body.a, body.b):
        options, rotor_options = spec_options(spec)
        served.append(pipeline.rotor_performance(
            factory, blade_key=spec.blade, options=options, rotor_options=rotor_options,
            approved_only=approved_only_setting(settings, spec.approved_only),
            policy=cache_policy(settings, reader),
        ))
    comparison = pipeline.compare_performance(served[0], served[1])
    if fmt == "json" and part is None:
        return json_response(comparison)
    if part is None and fmt == "csv":
        part = performance.DEFAULT_CSV_PART
    arrays = (performance.comparison_arrays(comparison) if part is None
              else performance.comparison_part(comparison, part))
    return arrays_response(request, fmt=fmt, content_hash=None, arrays=arrays,
                           meta=performance.comparison_meta(comparison, part), part=part)
