"""What the pages show, gathered from the store and the numeric core.

Each function takes an open database session and plain arguments and returns plain data
(dataclasses, lists, :class:`~polarsvc.web.plots.PlotSeries`) for a template or a plot; the
same function serves a page and the plot and CSV downloads beside it, so a picture and its
table never disagree. Nothing here renders HTML or knows about HTTP.
"""

from __future__ import annotations

import datetime as dt
from collections import defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import urlencode

import numpy as np
from sqlalchemy.orm import Session, sessionmaker

from polarsvc import pipeline, recipes
from polarsvc.aero import AeroError, Polar
from polarsvc.aero.characteristics import Characteristics, characteristics
from polarsvc.aero.polar import SURFACE_CONDITIONS
from polarsvc.aero.rotation import ROTATION_MODELS
from polarsvc.pipeline import ServedTable
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import blades as blade_store
from polarsvc.store import polars as polar_store
from polarsvc.store.errors import NotFound
from polarsvc.store.models import Airfoil, PolarRevision
from polarsvc.web.plots import PlotSeries

NEAR_WINDOW_DEG = (-30.0, 40.0)
"""Angles [deg] of the "near" plot view: the measured range and the start of stall."""

PLOT_SPANS: tuple[str, ...] = ("near", "full")

PLOT_COLUMNS = ("cl", "cd", "cm")
"""The coefficient columns a plot series takes from a served table (blade sets also hold
the dynamic-stall arrays)."""


class PageInputError(ValueError):
    """A page input (query parameter) that cannot be used; ``field`` names it."""

    def __init__(self, field: str, message: str):
        self.field = field
        super().__init__(f"{field}: {message}")


# -- station inputs for the rotational augmentation ------------------------------------------
@dataclass(frozen=True)
class StationInputs:
    """Inputs of the rotational augmentation shown on an airfoil page.

    Attributes
    ----------
    r_over_R : float
        Local radius over tip radius [-].
    chord_over_r : float
        Local chord over local radius [-].
    tip_speed_ratio : float
        Tip speed ratio Omega R / V [-] (used by the Du-Selig model).
    twist_deg : float
        Local twist [deg] (used by the Chaviaropoulos-Hansen model).
    model : str
        One of :data:`polarsvc.aero.rotation.ROTATION_MODELS`.
    """

    r_over_R: float = 0.3  # noqa: N815  (the keyword of polarsvc.aero.rotation)
    chord_over_r: float = 0.25
    tip_speed_ratio: float = 8.0
    twist_deg: float = 0.0
    model: str = "snel"

    def query(self) -> dict[str, str]:
        return {
            "r_over_R": f"{self.r_over_R:g}",
            "chord_over_r": f"{self.chord_over_r:g}",
            "tip_speed_ratio": f"{self.tip_speed_ratio:g}",
            "twist_deg": f"{self.twist_deg:g}",
            "model": self.model,
        }


MODELS = ROTATION_MODELS


# -- catalogue -------------------------------------------------------------------------------
@dataclass(frozen=True)
class CatalogueFilters:
    """GET filters of the catalogue; empty strings mean "any"."""

    q: str = ""
    family: str = ""
    surface: str = ""
    review_state: str = ""
    source_kind: str = ""

    @property
    def filters_revisions(self) -> bool:
        return bool(self.surface or self.review_state or self.source_kind)

    def query(self) -> dict[str, str]:
        """The filters as GET parameters (empty ones included)."""
        return {
            "q": self.q, "family": self.family, "surface": self.surface,
            "review_state": self.review_state, "source_kind": self.source_kind,
        }


@dataclass
class AirfoilRow:
    name: str
    family: str | None
    thickness: float
    reynolds: list[float] = field(default_factory=list)
    surfaces: list[str] = field(default_factory=list)
    review_counts: dict[str, int] = field(default_factory=dict)
    source_kinds: list[str] = field(default_factory=list)
    n_revisions: int = 0


CATALOGUE_PAGE_SIZE = 25


@dataclass
class CatalogueRows:
    """One page of the catalogue's airfoil rows, the cursor of the next page and the number
    of matching airfoils."""

    rows: list[AirfoilRow]
    next_cursor: str | None
    total: int | None


def catalogue_rows(
    session: Session, filters: CatalogueFilters, *, after: str | None = None,
    limit: int = CATALOGUE_PAGE_SIZE,
) -> CatalogueRows:
    """Airfoils (by thickness, then name; one keyset page) with a summary of their matching
    revisions, filtered and summarised in SQL (no table columns read)."""
    revision_filters = {
        "surface": filters.surface or None,
        "review_state": filters.review_state or None,
        "source_kind": filters.source_kind or None,
    }
    page = airfoil_store.page_airfoils(
        session, family=filters.family or None, search=filters.q or None, after=after,
        limit=limit,
        extra_filter=polar_store.revisions_matching(**revision_filters)
        if filters.filters_revisions else None,
        extra_key=tuple(revision_filters.values()) if filters.filters_revisions else (),
    )
    airfoils = [airfoil for airfoil, _ in page.items]
    groups = polar_store.revision_groups(
        session, [a.id for a in airfoils], **revision_filters
    )
    rows = []
    for airfoil in airfoils:
        grouped = groups.get(airfoil.id, [])
        counts: dict[str, int] = defaultdict(int)
        for _, _, state, _, count in grouped:
            counts[state] += count
        rows.append(
            AirfoilRow(
                name=airfoil.name,
                family=None if airfoil.family is None else airfoil.family.name,
                thickness=airfoil.thickness,
                reynolds=sorted({g[0] for g in grouped if g[0] is not None}),
                surfaces=sorted({g[1] for g in grouped}),
                review_counts=dict(sorted(counts.items())),
                source_kinds=sorted({g[3] for g in grouped}),
                n_revisions=sum(g[4] for g in grouped),
            )
        )
    return CatalogueRows(rows, page.next_cursor, page.total)


# -- airfoil page ----------------------------------------------------------------------------
def default_revision(revisions: Sequence[PolarRevision]) -> PolarRevision | None:
    """The first revision by Reynolds number among the clean ones (else the first one)."""
    if not revisions:
        return None
    clean = [r for r in revisions if r.surface == "clean"]
    pool = clean or list(revisions)
    return min(pool, key=lambda r: (r.reynolds is None, r.reynolds or 0.0, r.id))


def choose_revision(
    airfoil: Airfoil, revisions: Sequence[PolarRevision], key: str | None
) -> PolarRevision | None:
    """The revision ``key`` (a content hash or a prefix of one) of this airfoil, or the
    default one when ``key`` is empty.

    Raises
    ------
    NotFound
        If no revision of this airfoil starts with ``key``.
    """
    if not key:
        return default_revision(revisions)
    wanted = key.strip().lower()
    matches = [r for r in revisions if r.content_hash.startswith(wanted)]
    if len(matches) != 1 or len(wanted) < 8:
        raise NotFound(f"polar revision of airfoil {airfoil.name!r}", key)
    return matches[0]


def series_from_arrays(
    label: str,
    alpha_deg: np.ndarray,
    columns: Mapping[str, np.ndarray],
    style: str,
    span: str,
) -> PlotSeries:
    """One plot series from a table's arrays; ``span`` "near" keeps the angles of
    :data:`NEAR_WINDOW_DEG`, "full" all of them."""
    if span not in PLOT_SPANS:
        raise PageInputError("span", f"{span!r} is not one of {', '.join(PLOT_SPANS)}")
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    keep = np.ones(alpha.shape, dtype=bool)
    if span == "near":
        keep = (alpha >= NEAR_WINDOW_DEG[0]) & (alpha <= NEAR_WINDOW_DEG[1])
    cm = columns.get("cm")
    return PlotSeries(
        label=label,
        alpha_deg=alpha[keep],
        cl=np.asarray(columns["cl"])[keep],
        cd=np.asarray(columns["cd"])[keep],
        cm=None if cm is None else np.asarray(cm)[keep],
        style=style,  # type: ignore[arg-type]
    )


def polar_columns(polar: Polar) -> dict[str, np.ndarray]:
    """The coefficient columns of a polar by name."""
    columns = {"cl": polar.cl, "cd": polar.cd}
    if polar.cm is not None:
        columns["cm"] = polar.cm
    return columns


def extended_params() -> dict[str, Any]:
    """Parameters of the "extended" table shown on the airfoil page: the service defaults
    (:func:`polarsvc.recipes.extension_params`), so the page and the API share cache rows."""
    return recipes.revision_table_params("extended")


def augmented_params(inputs: StationInputs) -> dict[str, Any]:
    """Parameters of the "augmented" table at the page's station inputs."""
    return recipes.revision_table_params(
        "augmented",
        rotation={
            "model": inputs.model,
            "r_over_R": inputs.r_over_R,
            "chord_over_r": inputs.chord_over_r,
            "tip_speed_ratio": inputs.tip_speed_ratio,
            "twist_deg": inputs.twist_deg,
        },
    )


@dataclass
class AirfoilTables:
    """A stored table and the derived tables the page shows beside it (served through
    :mod:`polarsvc.pipeline`, so they are cached and have a lineage page)."""

    revision: PolarRevision
    measured: Polar
    extended: ServedTable | None
    augmented: ServedTable | None
    characteristics: Characteristics | None
    inputs: StationInputs
    problems: list[str]

    def series(self, span: str) -> list[PlotSeries]:
        """Measured rows as points, the full-range extension and its augmentation as lines."""
        out = [
            series_from_arrays(
                "stored rows", self.measured.alpha_deg, polar_columns(self.measured),
                "points", span,
            )
        ]
        if self.extended is not None:
            out.append(
                series_from_arrays(
                    "2D, full range (before augmentation)", self.extended.alpha_deg,
                    self.extended.columns, "line", span,
                )
            )
        if self.augmented is not None:
            label = (
                f"after augmentation ({self.inputs.model}, r/R {self.inputs.r_over_R:g}, "
                f"c/r {self.inputs.chord_over_r:g})"
            )
            out.append(
                series_from_arrays(
                    label, self.augmented.alpha_deg, self.augmented.columns, "dashed", span
                )
            )
        return out


    def augmentation_facts(self) -> list[tuple[str, str]]:
        """What the augmentation did at the page's station (from the served table's
        history): stall angle, fade, factors, clipping and calibration range."""
        if self.augmented is None:
            return []
        steps = self.augmented.reports.get("steps") or []
        step = next((s for s in reversed(steps) if s.get("step") == "augment_rotation"), None)
        if step is None:
            return []
        facts = [
            ("stall angle of the section", f"{step['stall_deg']:g} deg"),
            ("fade (smooth step)",
             f"full to {step['fade_start_deg']:g} deg, none from {step['fade_end_deg']:g} deg"),
            ("sides", "both" if step.get("negative_side") else
             f"above the zero-lift angle ({step['alpha0_deg']:.3g} deg) only"),
            ("lift factor applied", f"{step['lift_factor']:.4g}"),
            ("drag factor applied", f"{step['drag_factor']:.4g}"),
        ]
        for clipped in step.get("clipped_factors") or []:
            facts.append((f"{clipped['factor'].replace('_', ' ')} clipped",
                          f"{clipped['raw']:.4g} -> {clipped['applied']:g}"))
        calibration = step.get("calibration_chord_over_r") or {}
        if step.get("chord_over_r_outside_calibration"):
            facts.append((
                "c/r outside the model's calibration",
                f"{step['chord_over_r']:g} not in {calibration.get('low', 0):g}.."
                f"{calibration.get('high', 0):g} ({calibration.get('source', '')})",
            ))
        return facts


def airfoil_tables(
    factory: sessionmaker[Session], revision: PolarRevision, inputs: StationInputs,
    policy: pipeline.CachePolicy = pipeline.SERVICE_POLICY,
) -> AirfoilTables:
    """Load ``revision``, its characteristic values, and (through the pipeline) its
    full-range extension and its rotational augmentation at ``inputs``. Drafts are shown
    too: a curator inspects them before approval. A step that fails is reported in
    ``problems`` and left out."""
    measured = polar_store.load_polar(revision)
    problems: list[str] = []
    found = extended = augmented = None
    try:
        found = characteristics(measured)
    except AeroError as exc:
        problems.append(f"characteristic values: {exc}")
    for kind, make_params in (
        ("extended", extended_params),
        ("augmented", lambda: augmented_params(inputs)),
    ):
        try:
            served = pipeline.revision_table(
                factory,
                revision_key=revision.content_hash,
                kind=kind,
                params=make_params(),
                approved_only=False,
                policy=policy,
            )
        except AeroError as exc:
            problems.append(f"{kind} table: {exc}")
            continue
        if kind == "extended":
            extended = served
        else:
            augmented = served
    return AirfoilTables(revision, measured, extended, augmented, found, inputs, problems)


def provenance_rows(revision: PolarRevision) -> list[tuple[str, Any]]:
    """Label and value of every provenance field (values are user text: escape them)."""
    fields = polar_store.revision_provenance(revision)
    labels = {
        "source_kind": "source kind",
        "reference": "reference",
        "facility": "facility or code",
        "measured_on": "measured on",
        "contributor": "contributor",
        "notes": "notes",
    }
    return [(labels.get(name, name.replace("_", " ")), value) for name, value in fields.items()]


def station_query(inputs: StationInputs, revision: PolarRevision, **extra: str) -> str:
    """The query string that reproduces the page's choices in a plot or CSV address."""
    return urlencode({"revision": revision.content_hash[:16], **inputs.query(), **extra})


# -- audit -----------------------------------------------------------------------------------
def parse_moment(field_name: str, text: str | None) -> dt.datetime | None:
    """A timestamp typed into a form (ISO date or date-time; UTC when no offset is given)."""
    if not text:
        return None
    try:
        value = dt.datetime.fromisoformat(text.strip())
    except ValueError:
        raise PageInputError(
            field_name, f"{text!r} is not a date or date-time (YYYY-MM-DD[THH:MM])"
        ) from None
    if value.tzinfo is None:
        value = value.replace(tzinfo=dt.UTC)
    return value


def _float_input(params: Any, name: str, default: float, problems: list[str]) -> float:
    text = (params.get(name) or "").strip()
    if not text:
        return default
    try:
        value = float(text)
    except ValueError:
        problems.append(f"{name}: {text!r} is not a number; {default:g} used")
        return default
    if not np.isfinite(value):
        problems.append(f"{name}: must be finite; {default:g} used")
        return default
    return value


def parse_station_inputs(params: Any) -> tuple[StationInputs, list[str]]:
    """Station inputs from query parameters (a mapping of strings); unusable values fall
    back to the defaults and are reported."""
    problems: list[str] = []
    base = StationInputs()
    model = (params.get("model") or base.model).strip()
    if model not in MODELS:
        problems.append(f"model: {model!r} is not one of {', '.join(MODELS)}; snel used")
        model = base.model
    inputs = StationInputs(
        r_over_R=_float_input(params, "r_over_R", base.r_over_R, problems),
        chord_over_r=_float_input(params, "chord_over_r", base.chord_over_r, problems),
        tip_speed_ratio=_float_input(params, "tip_speed_ratio", base.tip_speed_ratio, problems),
        twist_deg=_float_input(params, "twist_deg", base.twist_deg, problems),
        model=model,
    )
    return inputs, problems




# -- family page -----------------------------------------------------------------------------
DEFAULT_FAMILY_REYNOLDS = 6e6
DEFAULT_FAMILY_THICKNESS = 0.27


@dataclass
class FamilyMember:
    """A member airfoil's stored revision nearest (in log10 Re) to the requested number."""

    name: str
    thickness: float
    revision: PolarRevision
    polar: Polar


@dataclass
class FamilyView:
    """A family's members (the revisions a blend draws on) and its blended table at a
    typed-in relative thickness and Reynolds number."""

    thickness: float
    reynolds: float
    surface: str
    airfoils: list[Airfoil]
    members: list[FamilyMember]
    blend: ServedTable | None
    problems: list[str]

    def member_for(self, name: str) -> FamilyMember | None:
        return next((m for m in self.members if m.name == name), None)

    def query(self) -> str:
        return urlencode(
            {
                "thickness": f"{self.thickness:g}",
                "reynolds": f"{self.reynolds:g}",
                "surface": self.surface,
            }
        )

    def member_series(self, span: str) -> tuple[list[PlotSeries], list[float]]:
        series = [
            series_from_arrays(
                f"{m.name} (t/c {m.thickness:g}, Re {m.revision.reynolds:.3g})",
                m.polar.alpha_deg, polar_columns(m.polar), "line", span,
            )
            for m in self.members
        ]
        return series, [m.thickness for m in self.members]

    def neighbours(self) -> list[FamilyMember]:
        """The members just below and above the requested thickness (or at it)."""
        below = [m for m in self.members if m.thickness <= self.thickness]
        above = [m for m in self.members if m.thickness >= self.thickness]
        chosen = []
        if below:
            chosen.append(max(below, key=lambda m: m.thickness))
        if above:
            nearest = min(above, key=lambda m: m.thickness)
            if nearest not in chosen:
                chosen.append(nearest)
        return chosen

    def blend_series(self, span: str) -> list[PlotSeries]:
        if self.blend is None:
            return []
        out = [
            series_from_arrays(
                f"blended, t/c {self.thickness:g}, Re {self.reynolds:.3g}",
                self.blend.alpha_deg, self.blend.columns, "line", span,
            )
        ]
        for member in self.neighbours():
            out.append(
                series_from_arrays(
                    f"{member.name} stored (Re {member.revision.reynolds:.3g})",
                    member.polar.alpha_deg, polar_columns(member.polar), "points", span,
                )
            )
        return out


def family_view(
    session: Session,
    factory: sessionmaker[Session],
    family: Any,
    params: Any,
    *,
    approved_only: bool,
    policy: pipeline.CachePolicy = pipeline.SERVICE_POLICY,
) -> FamilyView:
    """Members and blend of ``family`` at the thickness, Reynolds number and surface in the
    query ``params`` (a mapping of strings)."""
    problems: list[str] = []
    thickness = _float_input(params, "thickness", DEFAULT_FAMILY_THICKNESS, problems)
    reynolds = _float_input(params, "reynolds", DEFAULT_FAMILY_REYNOLDS, problems)
    surface = (params.get("surface") or "clean").strip()
    if surface not in SURFACE_CONDITIONS:
        problems.append(f"surface: {surface!r} is not one of {', '.join(SURFACE_CONDITIONS)}")
        surface = "clean"
    airfoils = list(airfoil_store.list_airfoils(session, family=family.name))
    members: list[FamilyMember] = []
    try:
        chosen = pipeline.select_family_members(
            session, family=family.name, surface=surface, approved_only=approved_only
        )
    except AeroError as exc:
        problems.append(str(exc))
        chosen = []
    by_airfoil: dict[str, list[PolarRevision]] = defaultdict(list)
    for revision in chosen:
        by_airfoil[revision.airfoil.name].append(revision)
    target = np.log10(reynolds) if reynolds > 0 else 0.0
    for airfoil in airfoils:
        candidates = [r for r in by_airfoil.get(airfoil.name, []) if r.reynolds]
        if not candidates:
            continue
        nearest = min(candidates, key=lambda r: abs(np.log10(r.reynolds) - target))
        members.append(
            FamilyMember(airfoil.name, airfoil.thickness, nearest, polar_store.load_polar(nearest))
        )
    blend = None
    if chosen:
        try:
            blend = pipeline.family_blend(
                factory,
                family=family.name,
                params=recipes.blend_params(
                    thickness=thickness, reynolds=reynolds, surface=surface
                ),
                approved_only=approved_only,
                policy=policy,
            )
        except (AeroError, NotFound) as exc:
            problems.append(f"blend: {exc}")
    return FamilyView(thickness, reynolds, surface, airfoils, members, blend, problems)


# -- blade page ------------------------------------------------------------------------------
@dataclass
class BladeView:
    """The latest revision of a stored blade, its stations, and its station tables (the
    "blade-set" table of :mod:`polarsvc.pipeline`)."""

    name: str
    content_hash: str
    definition: dict[str, Any]
    radius_m: np.ndarray
    chord_m: np.ndarray
    twist_deg: np.ndarray
    thickness: np.ndarray
    reynolds: np.ndarray | None
    clamp: bool
    tables: ServedTable | None
    problems: list[str]
    plain: ServedTable | None = None

    AUGMENTED_STATIONS_SHOWN = 4

    def augmented_stations(self) -> list[int]:
        """Indices of the innermost stations whose lift the augmentation changed (at most
        :attr:`AUGMENTED_STATIONS_SHOWN`)."""
        if self.tables is None or self.plain is None:
            return []
        after = np.asarray(self.tables.columns["cl"])
        before = np.asarray(self.plain.columns["cl"])
        changed = np.flatnonzero(np.max(np.abs(after - before), axis=1) > 0.0)
        return [int(i) for i in changed[: self.AUGMENTED_STATIONS_SHOWN]]

    def augmentation_series(self, span: str) -> tuple[list[PlotSeries], list[int]]:
        """Before (2D, dashed) and after (augmented, solid) at the innermost augmented
        stations, with one palette colour per station."""
        series, colours = [], []
        if self.tables is None or self.plain is None:
            return series, colours
        for slot, index in enumerate(self.augmented_stations()):
            radius = float(self.radius_m[index])
            for label, table, style in (("2D", self.plain, "dashed"),
                                        ("augmented", self.tables, "line")):
                station = {name: np.asarray(values)[index]
                           for name, values in table.columns.items() if name in PLOT_COLUMNS}
                series.append(series_from_arrays(
                    f"r {radius:g} m, {label}", table.alpha_deg, station, style, span))
                colours.append(slot)
        return series, colours

    def station_rows(self) -> list[dict[str, Any]]:
        """Per station: the augmentation's stall angle and fade, flags, and the dynamic-stall
        values served with the blade set (empty without tables)."""
        if self.tables is None:
            return []
        rows = []
        for report in self.tables.reports.get("stations") or []:
            rotation = report.get("rotation") or {}
            rows.append({
                "rotation": rotation,
                "dynamic_stall": report.get("dynamic_stall") or {},
                "flags": [
                    f"{c['factor'].replace('_', ' ')} clipped ({c['raw']:.3g} -> "
                    f"{c['applied']:g})" for c in rotation.get("clipped_factors") or []
                ] + (["c/r outside calibration"]
                     if rotation.get("chord_over_r_outside_calibration") else []),
            })
        return rows

    def station_series(self, span: str) -> tuple[list[PlotSeries], list[float]]:
        if self.tables is None:
            return [], []
        columns = self.tables.columns
        series = []
        for index, radius in enumerate(self.radius_m):
            station = {name: np.asarray(values)[index] for name, values in columns.items()
                       if name in PLOT_COLUMNS}
            series.append(
                series_from_arrays(f"r {radius:g} m", self.tables.alpha_deg, station, "line", span)
            )
        return series, [float(r) for r in self.radius_m]


def _station_column(stations: Sequence[Any], key: str, blade_name: str) -> np.ndarray:
    try:
        return np.array([float(station[key]) for station in stations], dtype=np.float64)
    except (KeyError, TypeError, ValueError):
        raise PageInputError(
            "definition", f"blade {blade_name!r}: every station needs a number '{key}'"
        ) from None


def _clamped_stations(reports: Mapping[str, Any]) -> list[float]:
    """Radii [m] of the stations the builder clamped (its per-station reports)."""
    return [
        float(report["radius_m"])
        for report in reports.get("stations", []) or []
        if report.get("thickness_clamped") or report.get("reynolds_clamped")
    ]


def blade_view(
    session: Session,
    factory: sessionmaker[Session],
    name: str,
    params: Any,
    *,
    approved_only: bool,
    policy: pipeline.CachePolicy = pipeline.SERVICE_POLICY,
) -> BladeView:
    """Blade ``name`` (latest revision) and its station tables with the blade's own
    operating point and surface; ``clamp`` (query "yes"/"no", default yes) takes stations
    outside the family's data to the nearest member, and the page lists them."""
    blade = blade_store.latest_blade(session, name)
    definition = blade_store.blade_definition(blade)
    stations = definition.get("stations") or []
    columns = {
        key: _station_column(stations, key, name)
        for key in ("radius_m", "chord_m", "twist_deg", "thickness")
    }
    problems: list[str] = []
    clamp = (params.get("clamp") or "yes") != "no"
    tables = reynolds = plain = None
    try:
        tables = pipeline.blade_set(
            factory, blade_key=blade.content_hash, options={"clamp": clamp},
            approved_only=approved_only, policy=policy,
        )
        plain = pipeline.blade_set(
            factory, blade_key=blade.content_hash,
            options={"clamp": clamp, "rotation": {"model": "none"}},
            approved_only=approved_only,
        )
        station_reports = tables.reports.get("stations") or []
        if len(station_reports) == columns["radius_m"].size:
            reynolds = np.array([float(r["reynolds_requested"]) for r in station_reports])
        clamped = _clamped_stations(tables.reports)
        if clamped:
            problems.append(
                "clamped to the nearest family data at r = "
                + ", ".join(f"{r:g} m" for r in clamped)
            )
    except (AeroError, NotFound, KeyError) as exc:
        problems.append(f"station tables: {exc}")
    return BladeView(
        name=blade.name,
        content_hash=blade.content_hash,
        definition=definition,
        reynolds=reynolds,
        clamp=clamp,
        tables=tables,
        problems=problems,
        plain=plain,
        **columns,
    )
