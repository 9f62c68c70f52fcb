"""A small client for scripts that feed a rotor solver: tables come back as numpy arrays.

Example::

    from polarsvc.client import PolarClient
    with PolarClient("http://127.0.0.1:8000", token="psv_...") as client:
        blade = client.blade_set("skerry-48")
        cl = blade.cl            # (n_stations, n_angles)
        f = blade.f_separation   # dynamic-stall inputs, (n_stations, n_angles)
        onset = [s["stall_onset_deg"] for s in blade.dynamic_stall]
        print(blade.content_hash, blade.recipe_hash)

Exception tree::

    ClientError
    +-- ServiceError          any non-success answer; .status_code, .detail
        +-- AuthError         401 or 403
        +-- NotFoundError     404
        +-- RequestRefused    other 4xx (bad input, conflicts, out of range)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import httpx
import numpy as np

from polarsvc.aero import Polar
from polarsvc.describe import section_conditions
from polarsvc.formats.binary import (
    ARROW_AVAILABLE,
    ARROW_MEDIA_TYPE,
    NPZ_MEDIA_TYPE,
    BinaryTable,
    decode_arrays_arrow,
    decode_arrays_npz,
    decode_arrow,
    decode_npz,
)
from polarsvc.package import StationPackage, read_station_package

__all__ = [
    "AuthError",
    "ClientError",
    "DerivedTable",
    "NotFoundError",
    "PolarClient",
    "RequestRefused",
    "RotorPerformance",
    "ServiceError",
    "StationPackage",
]

API_PREFIX = "/api/v1"


class ClientError(Exception):
    """Base of every error raised by :mod:`polarsvc.client`."""


class ServiceError(ClientError):
    """The service answered with an error status."""

    def __init__(self, status_code: int, detail: Any):
        self.status_code = status_code
        self.detail = detail
        super().__init__(f"HTTP {status_code}: {detail}")


class AuthError(ServiceError):
    """401 (no valid token) or 403 (role too weak)."""


class NotFoundError(ServiceError):
    """404: no such airfoil, family, revision, blade or derived table."""


class RequestRefused(ServiceError):
    """Another 4xx answer: bad input, a conflict, data out of range."""


@dataclass(frozen=True)
class DerivedTable:
    """A table from the service: angles [deg], coefficient arrays (1-D for one section, or
    stations x angles for a blade set) and the metadata (recipe, hashes, reports).

    Blade sets also carry the dynamic-stall inputs: ``f_separation`` (Kirchhoff separation
    function) and ``cl_fs`` (fully separated lift), stations x angles, and per station
    :attr:`dynamic_stall` (zero-lift angle, attached lift slope, stall onset)."""

    alpha_deg: np.ndarray
    cl: np.ndarray
    cd: np.ndarray
    cm: np.ndarray | None
    meta: dict[str, Any] = field(default_factory=dict)
    f_separation: np.ndarray | None = None
    cl_fs: np.ndarray | None = None

    @property
    def dynamic_stall(self) -> list[dict[str, Any]]:
        """Per station: ``alpha0_deg``, ``cl_alpha_per_rad``, ``stall_onset_deg`` and
        ``stall_onset_neg_deg`` (None for a station without lift); empty for a single
        section."""
        stations = (self.meta.get("reports") or {}).get("stations") or []
        return [dict(s["dynamic_stall"]) for s in stations if "dynamic_stall" in s]

    @property
    def content_hash(self) -> str:
        return str(self.meta.get("content_hash"))

    @property
    def recipe_hash(self) -> str | None:
        return self.meta.get("recipe_hash")

    def to_polar(self, station: int | None = None) -> Polar:
        """The table (or one station of a blade set) as a :class:`polarsvc.aero.Polar`, with
        the Reynolds number, thickness and surface the table states."""
        if self.cl.ndim == 2:
            if station is None:
                raise ValueError("a blade set holds several stations: pass station=<index>")
            cm = None if self.cm is None else self.cm[station]
            return Polar(self.alpha_deg, self.cl[station], self.cd[station], cm,
                         assume_degrees=True, **section_conditions(self.meta, station))
        return Polar(self.alpha_deg, self.cl, self.cd, self.cm, assume_degrees=True,
                     **section_conditions(self.meta))


@dataclass(frozen=True)
class RotorPerformance:
    """A rotor result from the service: named arrays (``arrays``; names and units in
    ``meta["reports"]["arrays"]``) and the metadata (recipe, hashes, assumptions,
    cautions). Items are the arrays: ``result["power_w"]``."""

    arrays: dict[str, np.ndarray]
    meta: dict[str, Any] = field(default_factory=dict)

    def __getitem__(self, name: str) -> np.ndarray:
        return self.arrays[name]

    @property
    def content_hash(self) -> str:
        return str(self.meta.get("content_hash"))

    @property
    def recipe_hash(self) -> str | None:
        return self.meta.get("recipe_hash")

    @property
    def rated_wind_speed_m_s(self) -> float | None:
        """Rated wind speed [m/s], or None when rated power is never reached."""
        value = float(self.arrays["rated_wind_speed_m_s"][0])
        return None if np.isnan(value) else value

    @property
    def annual_energy(self) -> dict[str, float]:
        """Annual energy [Wh] by wind distribution label."""
        labels = self.meta["reports"]["distributions"]
        return dict(zip(labels, self.arrays["annual_energy_wh"].tolist(), strict=True))


def _raise_for(response: httpx.Response) -> None:
    if response.status_code < 400:
        return
    try:
        detail = response.json().get("detail", response.text)
    except ValueError:
        detail = response.text
    if response.status_code in (401, 403):
        raise AuthError(response.status_code, detail)
    if response.status_code == 404:
        raise NotFoundError(response.status_code, detail)
    if response.status_code < 500:
        raise RequestRefused(response.status_code, detail)
    raise ServiceError(response.status_code, detail)


def _table_from_binary(payload: bytes, media_type: str) -> DerivedTable:
    """Decode an Arrow IPC stream or an .npz archive, by the answer's media type."""
    decoded: BinaryTable
    if media_type.startswith(ARROW_MEDIA_TYPE):
        decoded = decode_arrow(payload)
    elif media_type.startswith(NPZ_MEDIA_TYPE):
        decoded = decode_npz(payload)
    else:
        raise ClientError(f"unexpected table media type {media_type!r}")
    meta = dict(decoded.meta)
    if decoded.radius_m is not None:
        meta.setdefault("radius_m", decoded.radius_m.tolist())
    return DerivedTable(
        alpha_deg=decoded.alpha_deg,
        cl=decoded.columns["cl"],
        cd=decoded.columns["cd"],
        cm=decoded.columns.get("cm"),
        meta=meta,
        f_separation=decoded.columns.get("f_separation"),
        cl_fs=decoded.columns.get("cl_fs"),
    )


class PolarClient:
    """Client of a polarsvc server.

    Parameters
    ----------
    base_url : str
        Server address, e.g. ``http://127.0.0.1:8000``.
    token : str, optional
        API token (reader for reads, curator for uploads).
    transport : httpx.BaseTransport, optional
        Swappable transport (tests pass the application in-process).
    timeout : float
        Seconds per request.
    """

    def __init__(
        self,
        base_url: str = "http://127.0.0.1:8000",
        *,
        token: str | None = None,
        transport: httpx.BaseTransport | None = None,
        timeout: float = 60.0,
    ):
        headers = {"Authorization": f"Bearer {token}"} if token else {}
        self._http = httpx.Client(
            base_url=base_url.rstrip("/") + API_PREFIX,
            headers=headers,
            transport=transport,
            timeout=timeout,
        )

    def __enter__(self) -> PolarClient:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the connection pool."""
        self._http.close()

    # -- plumbing --------------------------------------------------------------------------
    def _get_json(self, path: str, **params: Any) -> Any:
        response = self._http.get(path, params=_clean(params))
        _raise_for(response)
        return response.json()

    def _get_all(self, path: str, **params: Any) -> list[Any]:
        """Every item of a paginated listing, following the ``Link: rel="next"`` headers."""
        response = self._http.get(path, params=_clean(params))
        _raise_for(response)
        items = list(response.json())
        while "next" in response.links:
            response = self._http.get(response.links["next"]["url"])
            _raise_for(response)
            items.extend(response.json())
        return items

    def _get_table(self, path: str, **params: Any) -> DerivedTable:
        # Arrow IPC when pyarrow is installed here (the server falls back to .npz when it
        # lacks pyarrow), else .npz
        fmt = "bin" if ARROW_AVAILABLE else "npz"
        accept = f"{ARROW_MEDIA_TYPE}, {NPZ_MEDIA_TYPE}" if ARROW_AVAILABLE else NPZ_MEDIA_TYPE
        response = self._http.get(
            path, params=_clean({**params, "format": fmt}), headers={"Accept": accept}
        )
        _raise_for(response)
        return _table_from_binary(response.content, response.headers.get("content-type", ""))

    # -- catalogue -------------------------------------------------------------------------
    def families(self) -> list[dict[str, Any]]:
        """All families with their airfoils (every page)."""
        return self._get_all("/families")

    def airfoils(self, *, family: str | None = None, search: str | None = None) -> list[dict]:
        """Airfoils, optionally of one family or matching a search text (every page)."""
        return self._get_all("/airfoils", family=family, search=search)

    def polars(self, **filters: Any) -> list[dict[str, Any]]:
        """Revision summaries (every page); filters: airfoil, family, surface, reynolds,
        review_state, source_kind."""
        return self._get_all("/polars", **filters)

    def polar(self, content_hash: str) -> Polar:
        """A stored revision's table as a :class:`Polar` (with its conditions)."""
        info = self._get_json(f"/polars/{content_hash}")
        table = info["table"]
        conditions = info["conditions"]
        return Polar(
            table["alpha_deg"], table["cl"], table["cd"], table.get("cm"),
            reynolds=conditions.get("reynolds"), mach=conditions.get("mach", 0.0),
            thickness=conditions.get("thickness"), surface=conditions.get("surface", "clean"),
            assume_degrees=True,
        )

    def revision(self, content_hash: str) -> dict[str, Any]:
        """A revision's metadata, provenance and review state."""
        return self._get_json(f"/polars/{content_hash}")

    # -- derived tables --------------------------------------------------------------------
    def extended(self, content_hash: str, **params: Any) -> DerivedTable:
        """A revision extended to -180..180 deg (params: method, aspect_ratio, cd_max, step_deg)."""
        return self._get_table(f"/polars/{content_hash}/extended", **params)

    def augmented(self, content_hash: str, **params: Any) -> DerivedTable:
        """A revision extended and rotationally augmented (params: model, r_over_R,
        chord_over_r, tip_speed_ratio, twist_deg, ...)."""
        return self._get_table(f"/polars/{content_hash}/augmented", **params)

    def blend(self, family: str, *, thickness: float, reynolds: float, **params: Any
              ) -> DerivedTable:
        """A family's full-range table at a relative thickness (fraction) and Reynolds number."""
        return self._get_table(
            f"/families/{family}/blend", thickness=thickness, reynolds=reynolds, **params
        )

    def blade_set(self, blade: str, **params: Any) -> DerivedTable:
        """The station tables of a stored blade definition (arrays are stations x angles)."""
        return self._get_table(f"/blades/{blade}/tables", **params)

    def performance(self, blade: str, **params: Any) -> RotorPerformance:
        """Rotor performance of a blade set (params: the blade-set parameters of
        :meth:`blade_set` and the rotor parameters of ``GET /blades/{key}/performance``,
        e.g. ``rotation_model="none"``, ``rated_power_w=2.5e6``, ``weibull_k=[2.0]``,
        ``weibull_a_m_s=[9.0]``)."""
        fmt = "bin" if ARROW_AVAILABLE else "npz"
        response = self._http.get(
            f"/blades/{blade}/performance", params=_clean({**params, "format": fmt}),
        )
        _raise_for(response)
        media_type = response.headers.get("content-type", "")
        if media_type.startswith(ARROW_MEDIA_TYPE):
            arrays, meta = decode_arrays_arrow(response.content)
        elif media_type.startswith(NPZ_MEDIA_TYPE):
            arrays, meta = decode_arrays_npz(response.content)
        else:
            raise ClientError(f"unexpected result media type {media_type!r}")
        return RotorPerformance(arrays=dict(arrays), meta=meta)

    def compare_performance(self, a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
        """Compare two blade sets (b minus a); each a mapping like ``{"blade": "skerry-48",
        "rotation_model": "none", "rotor": {"tip_loss": False}}`` (fields of the request
        body of ``POST /performance/compare``). Curves come back as numpy arrays."""
        response = self._http.post("/performance/compare", json={"a": a, "b": b})
        _raise_for(response)
        document = response.json()
        for block in ("cp_lambda", "power_curve"):
            document[block] = {k: np.asarray(v, dtype=np.float64)
                               for k, v in document[block].items()}
        return document

    def station_package(
        self, blade: str, *, path: str | Path | None = None, **params: Any
    ) -> StationPackage:
        """A blade set as a station package (one table per station plus a manifest; layout in
        :mod:`polarsvc.package`), checked against its recorded file hashes; written to
        ``path`` as a zip archive when given. ``params`` as for :meth:`blade_set`."""
        response = self._http.get(
            f"/blades/{blade}/tables", params=_clean({**params, "format": "zip"})
        )
        _raise_for(response)
        if path is not None:
            Path(path).write_bytes(response.content)
        return read_station_package(response.content)

    def derived(self, content_hash: str) -> DerivedTable:
        """A derived table or blade set by its content or recipe hash."""
        return self._get_table(f"/derived/{content_hash}")

    def lineage(self, content_hash: str) -> dict[str, Any]:
        """The tree of inputs of a derived table, down to stored revisions."""
        return self._get_json(f"/derived/{content_hash}/lineage")

    def verify(self, content_hash: str) -> dict[str, Any]:
        """Recompute a derived table from its recipe and compare hashes."""
        response = self._http.post(f"/derived/{content_hash}/verify")
        _raise_for(response)
        return response.json()

    # -- writes ----------------------------------------------------------------------------
    def upload(self, source: str | Path | bytes, *, content_type: str | None = None,
               **metadata: Any) -> dict[str, Any]:
        """Upload a polar file (CSV, TSV, text or JSON); metadata fills what the file lacks."""
        if isinstance(source, bytes):
            body, name = source, None
        else:
            path = Path(source)
            body, name = path.read_bytes(), path.name
        if content_type is None:
            content_type = "application/json" if (name or "").endswith(".json") else "text/csv"
        response = self._http.post(
            "/polars", content=body, params=_clean({**metadata, "filename": name}),
            headers={"Content-Type": content_type},
        )
        _raise_for(response)
        return response.json()

    def add_blade(self, definition: dict[str, Any]) -> dict[str, Any]:
        """Store a blade definition (a new revision unless identical)."""
        response = self._http.post("/blades", json=definition)
        _raise_for(response)
        return response.json()

    def review(self, content_hash: str, *, state: str, reason: str | None = None,
               replaced_by: str | None = None) -> dict[str, Any]:
        """Approve or deprecate a revision (curator)."""
        response = self._http.post(
            f"/polars/{content_hash}/review",
            json=_clean({"state": state, "reason": reason, "replaced_by": replaced_by}),
        )
        _raise_for(response)
        return response.json()


def _clean(params: dict[str, Any]) -> dict[str, Any]:
    return {key: value for key, value in params.items() if value is not None}
