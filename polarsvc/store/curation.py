"""Corrections with history: move an airfoil to another family, rename it (the old name
stays as an alias that still resolves), retire it from family blends or reinstate it, and
fix the provenance of a revision by a new revision that supersedes it.

Each is one curator action recording one audit event whose detail holds ``from`` (before),
``to`` (after) and ``reason``. Nothing is deleted: a corrected revision stays stored (and
verifiable), a renamed airfoil answers to its former name.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from polarsvc.store._lookup import check_name, check_text
from polarsvc.store.airfoils import get_airfoil, get_family
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import Conflict, InvalidValue, NotFound
from polarsvc.store.models import Airfoil, AirfoilAlias, PolarRevision, utc_now
from polarsvc.store.polars import (
    get_revision,
    load_polar,
    normalise_provenance,
    revision_flags,
    revision_provenance,
    store_polar,
)


def _reason(reason: str | None) -> str:
    if reason is None or not reason.strip():
        raise InvalidValue("reason", "a correction needs a reason (kept in the audit trail)")
    check_text("reason", reason)
    return reason.strip()


def _check_thickness_free(session: Session, airfoil: Airfoil, family_id: int | None) -> None:
    """Refuse a second active airfoil of the same thickness in one family (blends could not
    tell them apart)."""
    if family_id is None or airfoil.retired:
        return
    twin = session.scalars(
        select(Airfoil).where(
            Airfoil.family_id == family_id,
            Airfoil.thickness == airfoil.thickness,
            Airfoil.retired_at.is_(None),
            Airfoil.id != airfoil.id,
        )
    ).first()
    if twin is not None:
        raise Conflict(
            "airfoil", airfoil.name,
            f"airfoil {twin.name!r} of the target family has the same t/c "
            f"{airfoil.thickness:g}; retire one of them from blends first",
        )


def move_airfoil(
    session: Session, *, name: str, family: str | None, reason: str | None, actor: Actor
) -> Airfoil:
    """Move an airfoil (and so all its revisions) to another existing family, or out of
    any family (``family=None``).

    Raises
    ------
    NotFound
        Unknown airfoil.
    InvalidValue
        Unknown target family (a field of the request), or the airfoil is already in it.
    Conflict
        An active airfoil of the same thickness is in the target family.
    InvalidValue
        No reason, or the airfoil is already there.
    """
    why = _reason(reason)
    airfoil = get_airfoil(session, name)
    try:
        target = get_family(session, family) if family is not None else None
    except NotFound:
        # the family is a field of the request body, not the resource addressed: 422
        raise InvalidValue(
            "family", f"family {family!r} does not exist; create it first"
        ) from None
    before = airfoil.family.name if airfoil.family is not None else None
    if before == family:
        raise InvalidValue("family", f"airfoil {airfoil.name!r} is already in {family!r}")
    _check_thickness_free(session, airfoil, None if target is None else target.id)
    airfoil.family = target
    session.flush()
    record_event(
        session, actor=actor, action="airfoil.move", object_kind="airfoil",
        object_key=airfoil.name,
        detail={"from": {"family": before}, "to": {"family": family}, "reason": why},
    )
    return airfoil


def rename_airfoil(
    session: Session, *, name: str, new_name: str, reason: str | None, actor: Actor
) -> Airfoil:
    """Rename an airfoil; the former name becomes an alias that still resolves.

    The content hashes of its stored revisions keep the name they were stored under
    (verification tries the current name and every alias).

    Raises
    ------
    NotFound, Conflict (the new name is taken by an airfoil or alias), InvalidValue
    """
    why = _reason(reason)
    check_name("new_name", new_name)
    airfoil = get_airfoil(session, name)
    old = airfoil.name
    if new_name == old:
        raise InvalidValue("new_name", "is the current name")
    taken = session.scalars(select(Airfoil).where(Airfoil.name == new_name)).first()
    alias = session.scalars(select(AirfoilAlias).where(AirfoilAlias.name == new_name)).first()
    if taken is not None or alias is not None:
        raise Conflict("airfoil", new_name, "the name is taken (by an airfoil or an alias)")
    airfoil.name = new_name
    session.add(AirfoilAlias(name=old, airfoil=airfoil))
    session.flush()
    record_event(
        session, actor=actor, action="airfoil.rename", object_kind="airfoil",
        object_key=new_name,
        detail={"from": {"name": old}, "to": {"name": new_name}, "reason": why},
    )
    return airfoil


def set_retired(
    session: Session, *, name: str, retired: bool, reason: str | None, actor: Actor
) -> Airfoil:
    """Retire an airfoil from family blends and blade sets (``retired=True``; its revisions
    stay stored and served by hash), or reinstate it.

    Raises
    ------
    NotFound, InvalidValue (no reason, or already in that state), Conflict (reinstating
    next to an active airfoil of the same thickness)
    """
    why = _reason(reason)
    airfoil = get_airfoil(session, name)
    if airfoil.retired == retired:
        state = "retired" if retired else "active"
        raise InvalidValue("retired", f"airfoil {airfoil.name!r} is already {state}")
    before = {"retired": airfoil.retired, "retired_at": _iso(airfoil.retired_at)}
    if retired:
        airfoil.retired_at = utc_now()
        airfoil.retired_reason = why
    else:
        airfoil.retired_at = None
        airfoil.retired_reason = None
        _check_thickness_free(session, airfoil, airfoil.family_id)
    session.flush()
    record_event(
        session, actor=actor, action="airfoil.retire" if retired else "airfoil.reinstate",
        object_kind="airfoil", object_key=airfoil.name,
        detail={
            "from": before,
            "to": {"retired": airfoil.retired, "retired_at": _iso(airfoil.retired_at)},
            "reason": why,
        },
    )
    return airfoil


def _iso(value: dt.datetime | None) -> str | None:
    return None if value is None else value.isoformat()


def correct_provenance(
    session: Session,
    *,
    content_hash: str,
    changes: Mapping[str, Any],
    reason: str | None,
    actor: Actor,
) -> PolarRevision:
    """Fix provenance fields of a revision: a new revision with the same table, conditions
    and quality flags and the corrected provenance, superseding the old one (which stays
    stored). One audit event ``polar.correct`` records the changed fields before and after.

    Raises
    ------
    NotFound, InvalidValue (unknown field, nothing changed, no reason), Conflict (the
    corrected revision exists already)
    """
    why = _reason(reason)
    old = get_revision(session, content_hash)
    before = revision_provenance(old)
    after = normalise_provenance({**before, **dict(changes)})
    changed = sorted(k for k in after if after[k] != before[k])
    if not changed:
        raise InvalidValue("provenance", "the correction changes no field")
    revision, created = store_polar(
        session,
        airfoil_name=old.airfoil.name,
        polar=load_polar(old),
        provenance=after,
        supersedes_hash=old.content_hash,
        quality_flags=revision_flags(old),
        quality_override=old.quality_override,
        actor=actor,
        audit_action="polar.correct",
        audit_detail={
            "from": {k: _shown(before[k]) for k in changed},
            "to": {k: _shown(after[k]) for k in changed},
            "reason": why,
        },
    )
    if not created:
        raise Conflict("polar revision", revision.content_hash, "this correction exists already")
    return revision


def _shown(value: Any) -> Any:
    return value.isoformat() if isinstance(value, dt.date) else value
