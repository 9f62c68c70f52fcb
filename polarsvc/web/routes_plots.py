"""Plot downloads (SVG) and the tables behind them (CSV), for the airfoil, family and blade
pages. Each figure and its CSV come from the same view-data function."""

from __future__ import annotations

import numpy as np
from fastapi import APIRouter, Request
from fastapi.responses import Response

from polarsvc import recipes
from polarsvc.api.deps import ReadSession
from polarsvc.formats import table_to_csv
from polarsvc.names import safe_file_stem
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.web import plots, rotor_plots, rotor_view, viewdata
from polarsvc.web.security import PageError, PageReader, Viewer

SVG_MEDIA_TYPE = "image/svg+xml"
CSV_MEDIA_TYPE = "text/csv; charset=utf-8"

DOWNLOAD_HEADERS = {
    "X-Content-Type-Options": "nosniff",
    # An SVG opened on its own may style itself but never run a script.
    "Content-Security-Policy": "default-src 'none'; style-src 'unsafe-inline'",
    "Cache-Control": "private, no-cache",
}


def download_name(*parts: str) -> str:
    """A file name built from user-supplied parts (:func:`polarsvc.names.safe_file_stem`)."""
    return safe_file_stem("-".join(parts) or "plot")


def svg_response(body: bytes, filename: str) -> Response:
    return Response(
        body,
        media_type=SVG_MEDIA_TYPE,
        headers={"Content-Disposition": f'inline; filename="{filename}.svg"', **DOWNLOAD_HEADERS},
    )


def csv_response(body: bytes, filename: str) -> Response:
    return Response(
        body,
        media_type=CSV_MEDIA_TYPE,
        headers={
            "Content-Disposition": f'attachment; filename="{filename}.csv"',
            **DOWNLOAD_HEADERS,
        },
    )


def _kind(kind: str) -> str:
    if kind not in plots.PLOT_KINDS:
        raise PageError(404, f"no plot kind {kind!r}; kinds: {', '.join(plots.PLOT_KINDS)}")
    return kind


def _span(request: Request) -> str:
    span = request.query_params.get("span") or "near"
    if span not in viewdata.PLOT_SPANS:
        raise PageError(422, f"span {span!r} is not one of {', '.join(viewdata.PLOT_SPANS)}")
    return span


def _airfoil_series(
    request: Request, session, name: str, viewer: Viewer
) -> tuple[list[plots.PlotSeries], str]:
    airfoil = airfoil_store.get_airfoil(session, name)
    revisions = polar_store.list_revisions(session, airfoil=name)
    revision = viewdata.choose_revision(
        airfoil, revisions, request.query_params.get("revision", "")
    )
    if revision is None:
        raise PageError(404, f"airfoil {name!r} holds no polar revision")
    inputs, _ = viewdata.parse_station_inputs(request.query_params)
    tables = viewdata.airfoil_tables(
        request.app.state.session_factory, revision, inputs, viewer.cache_policy(request)
    )
    return tables.series(_span(request)), revision.content_hash[:12]


def add_routes(router: APIRouter) -> None:
    # -- airfoil ------------------------------------------------------------------------
    @router.get("/plots/airfoils/{name}/{kind}.svg")
    def airfoil_plot_svg(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        series, short = _airfoil_series(request, session, name, viewer)
        title = f"{name}: {plots.KIND_TITLES[_kind(kind)].lower()}"
        body = plots.polar_plots_svg(series, kind=kind, title=title)  # type: ignore[arg-type]
        return svg_response(body, download_name(name, short, kind))

    @router.get("/plots/airfoils/{name}/{kind}.csv")
    def airfoil_plot_csv(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        _kind(kind)
        series, short = _airfoil_series(request, session, name, viewer)
        return csv_response(plots.series_csv(series), download_name(name, short, kind))

    # -- family -------------------------------------------------------------------------
    def family_data(request: Request, session, name: str, viewer: Viewer) -> viewdata.FamilyView:
        family = airfoil_store.get_family(session, name)
        return viewdata.family_view(
            session, request.app.state.session_factory, family, request.query_params,
            approved_only=bool(request.app.state.settings.approved_only),
            policy=viewer.cache_policy(request),
        )

    @router.get("/plots/families/{name}/members-{kind}.svg")
    def family_members_svg(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        view = family_data(request, session, name, viewer)
        series, thickness = view.member_series(_span(request))
        body = plots.overlay_svg(
            series,
            thickness,
            colour_label=plots.AXIS_LABELS["thickness"],
            kind=_kind(kind),  # type: ignore[arg-type]
            title=f"Family {name} at Re {view.reynolds:.3g}, {view.surface}",
        )
        return svg_response(body, download_name(name, "members", kind))

    @router.get("/plots/families/{name}/members-{kind}.csv")
    def family_members_csv(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        _kind(kind)
        series, _ = family_data(request, session, name, viewer).member_series(_span(request))
        return csv_response(plots.series_csv(series), download_name(name, "members", kind))

    @router.get("/plots/families/{name}/blend-{kind}.svg")
    def family_blend_svg(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        view = family_data(request, session, name, viewer)
        body = plots.polar_plots_svg(
            view.blend_series(_span(request)),
            kind=_kind(kind),  # type: ignore[arg-type]
            title=f"Family {name} blended at t/c {view.thickness:g}",
        )
        return svg_response(body, download_name(name, "blend", f"{view.thickness:g}", kind))

    @router.get("/plots/families/{name}/blend-{kind}.csv")
    def family_blend_csv(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        _kind(kind)
        view = family_data(request, session, name, viewer)
        return csv_response(
            plots.series_csv(view.blend_series(_span(request))),
            download_name(name, "blend", f"{view.thickness:g}", kind),
        )

    # -- blade --------------------------------------------------------------------------
    def blade_data(request: Request, session, name: str, viewer: Viewer) -> viewdata.BladeView:
        return viewdata.blade_view(
            session, request.app.state.session_factory, name, request.query_params,
            approved_only=bool(request.app.state.settings.approved_only),
            policy=viewer.cache_policy(request),
        )

    @router.get("/plots/blades/{name}/planform.svg")
    def blade_planform_svg(
        request: Request, name: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        view = blade_data(request, session, name, viewer)
        body = plots.blade_planform_svg(
            view.radius_m, view.chord_m, view.twist_deg, view.thickness,
            title=f"Blade {name} along the span",
        )
        return svg_response(body, download_name(name, "planform"))

    @router.get("/plots/blades/{name}/planform.csv")
    def blade_planform_csv(
        request: Request, name: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        view = blade_data(request, session, name, viewer)
        body = plots.planform_csv(view.radius_m, view.chord_m, view.twist_deg, view.thickness)
        return csv_response(body, download_name(name, "planform"))

    @router.get("/plots/blades/{name}/stations-{kind}.svg")
    def blade_stations_svg(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        view = blade_data(request, session, name, viewer)
        series, radius = view.station_series(_span(request))
        body = plots.overlay_svg(
            series,
            radius,
            colour_label=plots.AXIS_LABELS["radius"],
            kind=_kind(kind),  # type: ignore[arg-type]
            title=f"Blade {name}: station tables",
        )
        return svg_response(body, download_name(name, "stations", kind))

    @router.get("/plots/blades/{name}/augmentation-{kind}.svg")
    def blade_augmentation_svg(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        view = blade_data(request, session, name, viewer)
        series, colours = view.augmentation_series(_span(request))
        body = plots.polar_plots_svg(
            series, kind=_kind(kind),  # type: ignore[arg-type]
            title=f"Blade {name}: rotational augmentation, before and after",
            colour_index=colours,
        )
        return svg_response(body, download_name(name, "augmentation", kind))

    @router.get("/plots/blades/{name}/augmentation-{kind}.csv")
    def blade_augmentation_csv(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        _kind(kind)
        series, _ = blade_data(request, session, name, viewer).augmentation_series(_span(request))
        return csv_response(plots.series_csv(series), download_name(name, "augmentation", kind))

    @router.get("/plots/blades/{name}/dynamic-stall.csv")
    def blade_dynamic_stall_csv(
        request: Request, name: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        """The dynamic-stall arrays of the blade set (long layout by station radius), with
        each station's zero-lift angle, lift slope and stall onset as comments."""
        view = blade_data(request, session, name, viewer)
        if view.tables is None:
            raise PageError(404, f"blade {name!r} has no station tables: {view.problems}")
        columns = {key: view.tables.columns[key] for key in recipes.DYNAMIC_STALL_COLUMNS
                   if key in view.tables.columns}
        if not columns:
            raise PageError(404, f"the station tables of blade {name!r} hold no dynamic-stall "
                                 "inputs")
        comments: dict[str, object] = {
            "blade": view.name,
            "table": view.tables.content_hash,
            **recipes.dynamic_stall_comments(view.tables.reports.get("stations")),
        }
        body = table_to_csv(
            view.tables.alpha_deg, columns, header_comments=comments,
            stations=[float(r) for r in view.radius_m], station_column="radius_m",
        ).encode("utf-8")
        return csv_response(body, download_name(name, "dynamic-stall"))

    @router.get("/plots/blades/{name}/stations-{kind}.csv")
    def blade_stations_csv(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        _kind(kind)
        series, _ = blade_data(request, session, name, viewer).station_series(_span(request))
        return csv_response(plots.series_csv(series), download_name(name, "stations", kind))

    # -- rotor ------------------------------------------------------------------------------
    def rotor_data(
        request: Request, session, name: str, viewer: PageReader
    ) -> rotor_view.RotorView:
        blade = blade_store.latest_blade(session, name)
        clamp = (request.query_params.get("clamp") or "yes") != "no"
        return rotor_view.rotor_view(
            request.app.state.session_factory, blade.content_hash, request.query_params,
            clamp=clamp, approved_only=bool(request.app.state.settings.approved_only),
            policy=viewer.cache_policy(request),
        )

    def rotor_curves(view: rotor_view.RotorView, kind: str):
        """(x name, x, curves, x label, y label, title, zero line) of a rotor plot."""
        if view.result is None:
            raise PageError(404, "this blade has no rotor result (see the blade page)")
        a = view.arrays
        b = view.other.columns if view.other is not None else None
        label_b = rotor_view.COMPARISONS[view.compare]
        if kind == "cp-lambda":
            curves = [("Cp", a["cp_lambda"])]
            if b is not None:
                curves = [("as stored", a["cp_lambda"]), (label_b, np.interp(
                    a["tip_speed_ratio"], b["tip_speed_ratio"], b["cp_lambda"]))]
            return ("tip_speed_ratio", a["tip_speed_ratio"], curves, "tip speed ratio [-]",
                    "power coefficient Cp [-]", "Cp at the fine pitch", False)
        if kind == "power":
            curves = [("electrical power [kW]", a["power_w"] / 1e3)]
            if b is not None:
                curves = [("as stored", a["power_w"] / 1e3), (label_b, np.interp(
                    a["wind_speed_m_s"], b["wind_speed_m_s"], b["power_w"]) / 1e3)]
            return ("wind_speed_m_s", a["wind_speed_m_s"], curves, "wind speed [m/s]",
                    "electrical power [kW]", "Power curve", False)
        if kind == "loads":
            row, station = view.loads() or (0, {})
            speed = float(a["wind_speed_m_s"][row])
            curves = [("normal [kN/m]", station["normal_force_n_per_m"] / 1e3),
                      ("tangential [kN/m]", station["tangential_force_n_per_m"] / 1e3)]
            return ("radius_m", a["radius_m"], curves, "radius r [m]",
                    "force per unit length [kN/m]", f"Spanwise loads at {speed:g} m/s", True)
        if kind in ("delta-cp", "delta-power"):
            if view.comparison is None:
                raise PageError(404, "choose a comparison on the blade page first")
            if kind == "delta-cp":
                block = view.comparison["cp_lambda"]
                return ("tip_speed_ratio", block["tip_speed_ratio"],
                        [("delta Cp", block["delta"])], "tip speed ratio [-]",
                        "delta Cp [-]", f"Cp, {label_b} minus as stored", True)
            block = view.comparison["power_curve"]
            return ("wind_speed_m_s", block["wind_speed_m_s"],
                    [("delta power [kW]", np.asarray(block["delta_w"]) / 1e3)],
                    "wind speed [m/s]", "delta power [kW]",
                    f"Power, {label_b} minus as stored", True)
        raise PageError(404, f"no rotor plot {kind!r}")

    @router.get("/plots/blades/{name}/rotor-{kind}.svg")
    def blade_rotor_svg(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        _, x, curves, xlabel, ylabel, title, zero = rotor_curves(
            rotor_data(request, session, name, viewer), kind
        )
        body = rotor_plots.curves_svg(x, curves, xlabel=xlabel, ylabel=ylabel,
                                      title=f"{name}: {title}", zero_line=zero)
        return svg_response(body, download_name(name, "rotor", kind))

    @router.get("/plots/blades/{name}/rotor-{kind}.csv")
    def blade_rotor_csv(
        request: Request, name: str, kind: str, viewer: PageReader, session: ReadSession
    ) -> Response:
        x_name, x, curves, *_ = rotor_curves(rotor_data(request, session, name, viewer), kind)
        return csv_response(rotor_plots.curves_csv(x_name, x, curves),
                            download_name(name, "rotor", kind))
