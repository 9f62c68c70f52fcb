"""Families and airfoils."""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from typing import Any

from sqlalchemy import func, select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session, defer, selectinload

from polarsvc.hashing import canonical_json
from polarsvc.store._lookup import check_name, check_text, escape_like
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import Conflict, InvalidValue, NotFound
from polarsvc.store.models import Airfoil, AirfoilAlias, Family
from polarsvc.store.paging import (
    DEFAULT_PAGE_SIZE,
    Page,
    check_limit,
    count_rows,
    decode_cursor,
    keyset_after,
    take_page,
)


def get_family(session: Session, name: str) -> Family:
    """The family called ``name``; :class:`NotFound` otherwise."""
    family = session.scalars(select(Family).where(Family.name == name)).one_or_none()
    if family is None:
        raise NotFound("family", name)
    return family


def create_family(session: Session, *, name: str, description: str = "", actor: Actor) -> Family:
    """Create a family; :class:`Conflict` if the name is taken."""
    family, created = get_or_create_family(session, name=name, description=description, actor=actor)
    if not created:
        raise Conflict("family", name, "already exists")
    return family


def get_or_create_family(
    session: Session, *, name: str, description: str = "", actor: Actor
) -> tuple[Family, bool]:
    """The family called ``name``, created (with ``description``) if missing.

    Returns
    -------
    (Family, bool)
        The row and whether it was created. An existing family is returned unchanged.
    """
    check_name("name", name)
    check_text("description", description)
    existing = session.scalars(select(Family).where(Family.name == name)).one_or_none()
    if existing is not None:
        return existing, False
    family = Family(name=name, description=description)
    try:
        with session.begin_nested():
            session.add(family)
    except IntegrityError:
        # another transaction created it first (PostgreSQL; SQLite writers are serialised)
        return get_family(session, name), False
    record_event(
        session,
        actor=actor,
        action="family.create",
        object_kind="family",
        object_key=name,
        detail={"description": description},
    )
    return family, True


def list_families(session: Session) -> Sequence[Family]:
    """All families, by name."""
    return session.scalars(select(Family).order_by(Family.name)).all()


def _coordinates_text(coordinates: Mapping[str, Sequence[float]] | None) -> str | None:
    if coordinates is None:
        return None
    if set(coordinates) != {"x", "y"}:
        raise InvalidValue("coordinates", "must hold exactly the lists 'x' and 'y'")
    x = [float(v) for v in coordinates["x"]]
    y = [float(v) for v in coordinates["y"]]
    if len(x) != len(y) or len(x) < 3:
        raise InvalidValue("coordinates", f"x and y need equal length >= 3, got {len(x)}, {len(y)}")
    if not all(math.isfinite(v) for v in (*x, *y)):
        raise InvalidValue("coordinates", "values must be finite")
    return canonical_json({"x": x, "y": y}).decode("utf-8")


def airfoil_coordinates(airfoil: Airfoil) -> dict[str, list[float]] | None:
    """The stored outline as ``{"x": [...], "y": [...]}`` (chord fractions), or None."""
    return None if airfoil.coordinates is None else json.loads(airfoil.coordinates)


def create_airfoil(
    session: Session,
    *,
    name: str,
    thickness: float,
    family: str | None = None,
    description: str = "",
    coordinates: Mapping[str, Sequence[float]] | None = None,
    actor: Actor,
) -> tuple[Airfoil, bool]:
    """Create an airfoil, or return the existing identical one.

    Parameters
    ----------
    name : str
        Unique airfoil name (:mod:`polarsvc.names`).
    thickness : float
        Relative thickness t/c as a fraction, 0 < t/c <= 1.
    family : str, optional
        Name of an existing family.
    coordinates : mapping, optional
        Outline ``{"x": [...], "y": [...]}`` in chord fractions.

    Returns
    -------
    (Airfoil, bool)
        The row and whether it was created.

    Raises
    ------
    Conflict
        If an airfoil of that name exists with different attributes, the name is a former
        name of another airfoil, or the family already holds an active airfoil of the same
        thickness.
    InvalidValue
        On a bad name, thickness or outline.
    NotFound
        If ``family`` does not exist.
    """
    check_name("name", name)
    check_text("description", description)
    if family is not None:
        check_name("family", family)
    thickness = float(thickness)
    if not (math.isfinite(thickness) and 0.0 < thickness <= 1.0):
        raise InvalidValue("thickness", f"must lie in (0, 1] as a fraction, got {thickness!r}")
    family_row = get_family(session, family) if family is not None else None
    coordinates_text = _coordinates_text(coordinates)
    wanted: dict[str, Any] = {
        "thickness": thickness,
        "family_id": None if family_row is None else family_row.id,
        "description": description,
        "coordinates": coordinates_text,
    }
    existing = session.scalars(select(Airfoil).where(Airfoil.name == name)).one_or_none()
    former = session.scalars(select(AirfoilAlias).where(AirfoilAlias.name == name)).first()
    if existing is None and former is not None:
        raise Conflict("airfoil", name, f"is a former name of airfoil {former.airfoil.name!r}")
    if existing is None and family_row is not None:
        twin = session.scalars(
            select(Airfoil).where(
                Airfoil.family_id == family_row.id,
                Airfoil.thickness == thickness,
                Airfoil.retired_at.is_(None),
                Airfoil.name != name,  # the same airfoil created concurrently is no twin
            )
        ).first()
        if twin is not None:
            raise Conflict(
                "airfoil", name,
                f"family {family!r} already holds airfoil {twin.name!r} at t/c {thickness:g}; "
                "blends could not tell them apart: retire it first, or use another family",
            )
    if existing is None:
        airfoil = Airfoil(name=name, **wanted)
        try:
            with session.begin_nested():
                session.add(airfoil)
        except IntegrityError:
            existing = get_airfoil(session, name)
        else:
            record_event(
                session,
                actor=actor,
                action="airfoil.create",
                object_kind="airfoil",
                object_key=name,
                detail={"thickness": thickness, "family": family},
            )
            return airfoil, True
    differences = sorted(key for key, value in wanted.items() if getattr(existing, key) != value)
    if differences:
        raise Conflict("airfoil", name, f"exists with different {', '.join(differences)}")
    return existing, False


def get_airfoil(session: Session, name: str) -> Airfoil:
    """The airfoil called ``name``, or whose former name (alias, after a rename) is
    ``name``; :class:`NotFound` otherwise."""
    airfoil = session.scalars(select(Airfoil).where(Airfoil.name == name)).one_or_none()
    if airfoil is None:
        airfoil = session.scalars(
            select(Airfoil).join(AirfoilAlias).where(AirfoilAlias.name == name)
        ).one_or_none()
    if airfoil is None:
        raise NotFound("airfoil", name)
    return airfoil


def list_airfoils(
    session: Session, *, family: str | None = None, search: str | None = None
) -> Sequence[Airfoil]:
    """Airfoils by thickness then name, optionally of one family and/or whose name contains
    ``search`` (case-insensitive, taken literally: ``%`` and ``_`` are not wildcards)."""
    statement = select(Airfoil)
    if family is not None:
        statement = statement.join(Family).where(Family.name == family)
    if search:
        pattern = f"%{escape_like(search.lower())}%"
        statement = statement.where(Airfoil.name.ilike(pattern, escape="\\"))
    return session.scalars(statement.order_by(Airfoil.thickness, Airfoil.name)).all()


def family_members(
    session: Session, family_ids: Sequence[int]
) -> dict[int, list[tuple[str, float]]]:
    """The (name, thickness) of each given family's airfoils, by thickness then name: one
    query answered from ``ix_airfoil_family_order``."""
    if not family_ids:
        return {}
    statement = (
        select(Airfoil.family_id, Airfoil.name, Airfoil.thickness)
        .where(Airfoil.family_id.in_(list(family_ids)))
        .order_by(Airfoil.family_id, Airfoil.thickness, Airfoil.name)
    )
    members: dict[int, list[tuple[str, float]]] = {i: [] for i in family_ids}
    for family_id, name, thickness in session.execute(statement):
        members[family_id].append((name, thickness))
    return members


def page_families(
    session: Session, *, after: str | None = None, limit: int = DEFAULT_PAGE_SIZE
) -> Page[Family]:
    """One page of families by name (their airfoils: :func:`family_members`). The total is
    counted."""
    limit = check_limit(limit)
    statement = select(Family)
    if after is not None:
        (name,) = decode_cursor(after, (str,))
        statement = statement.where(Family.name > name)
    rows = session.scalars(statement.order_by(Family.name).limit(limit + 1)).all()
    total = count_rows(session, select(func.count(Family.id)), ("families",))
    return take_page(rows, limit, lambda f: (f.name,), total)


def family_member_counts(session: Session) -> dict[int, int]:
    """The number of airfoils of each family, by family id (one grouped, index-only query)."""
    statement = (
        select(Airfoil.family_id, func.count(Airfoil.id))
        .where(Airfoil.family_id.is_not(None))
        .group_by(Airfoil.family_id)
    )
    return {family_id: count for family_id, count in session.execute(statement).all()}


def page_airfoils(
    session: Session,
    *,
    family: str | None = None,
    search: str | None = None,
    after: str | None = None,
    limit: int = DEFAULT_PAGE_SIZE,
    extra_filter: Any = None,
    extra_key: tuple[Any, ...] = (),
) -> Page[tuple[Airfoil, bool]]:
    """One page of airfoils by thickness then name, optionally of one family and/or whose
    name contains ``search`` (as :func:`list_airfoils`); each item is the airfoil (family
    loaded, outline not read) and whether it has an outline. ``extra_filter`` is a further
    SQL condition on :class:`Airfoil` (e.g. an EXISTS over its revisions), ``extra_key``
    the values that make it (they name the kept count). The total is counted."""
    limit = check_limit(limit)
    conditions = []
    if family is not None:
        family_id = select(Family.id).where(Family.name == family).scalar_subquery()
        conditions.append(Airfoil.family_id == family_id)
    if search:
        pattern = f"%{escape_like(search.lower())}%"
        conditions.append(Airfoil.name.ilike(pattern, escape="\\"))
    if extra_filter is not None:
        conditions.append(extra_filter)
    statement = select(Airfoil, Airfoil.coordinates.is_not(None)).options(
        defer(Airfoil.coordinates), selectinload(Airfoil.family).load_only(Family.name),
        selectinload(Airfoil.aliases).load_only(AirfoilAlias.name),
    ).where(*conditions)
    if after is not None:
        thickness, name = decode_cursor(after, (float, str))
        statement = statement.where(
            keyset_after((Airfoil.thickness, Airfoil.name), (thickness, name))
        )
    statement = statement.order_by(Airfoil.thickness, Airfoil.name).limit(limit + 1)
    rows = [(airfoil, bool(has)) for airfoil, has in session.execute(statement).all()]
    total = count_rows(
        session, select(func.count(Airfoil.id)).where(*conditions),
        ("airfoils", family, search, *extra_key),
    )
    return take_page(rows, limit, lambda item: (item[0].thickness, item[0].name), total)
