"""Families and airfoils."""

from __future__ import annotations

import json
import math
from collections.abc import Mapping, Sequence
from typing import Any

from sqlalchemy import select
from sqlalchemy.exc import IntegrityError
from sqlalchemy.orm import Session

from polarsvc.hashing import canonical_json
from polarsvc.store._lookup import check_name, check_text, escape_like
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import Conflict, InvalidValue, NotFound
from polarsvc.store.models import Airfoil, Family


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
        If an airfoil of that name exists with different attributes.
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
    """The airfoil called ``name``; :class:`NotFound` otherwise."""
    airfoil = session.scalars(select(Airfoil).where(Airfoil.name == name)).one_or_none()
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
