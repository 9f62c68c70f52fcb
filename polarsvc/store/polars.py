"""Stored polar revisions: store, load, look up, list and review."""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping, Sequence
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from polarsvc.aero.polar import Polar
from polarsvc.hashing import (
    PROVENANCE_FIELDS,
    canonical_array_bytes,
    decode_array_bytes,
    polar_content_hash,
)
from polarsvc.store._lookup import check_choice, check_text, find_by_hash, insert_or_winner
from polarsvc.store.airfoils import get_airfoil
from polarsvc.store.audit import Actor, record_event
from polarsvc.store.errors import (
    IntegrityProblem,
    InvalidTransition,
    InvalidValue,
    NotFound,
)
from polarsvc.store.models import REVIEW_STATES, SOURCE_KINDS, Airfoil, Family, PolarRevision

REVIEW_TRANSITIONS: dict[str, tuple[str, ...]] = {
    "draft": ("approved", "deprecated"),
    "approved": ("deprecated",),
    "deprecated": (),
}
"""Allowed review-state changes; deprecation needs a reason."""

THICKNESS_TOLERANCE = 1e-9


def normalise_provenance(provenance: Mapping[str, Any]) -> dict[str, Any]:
    """Check a provenance mapping and return it with every field present.

    ``source_kind`` is required and one of :data:`~polarsvc.store.models.SOURCE_KINDS`;
    ``measured_on`` may be a :class:`datetime.date` or an ISO ``YYYY-MM-DD`` string (it is
    returned as a date); the other fields are strings or None, kept literally (no control
    characters other than tab and line ends: :func:`polarsvc.names.check_text`).

    Raises
    ------
    InvalidValue
        Naming the offending field.
    """
    unknown = sorted(set(provenance) - set(PROVENANCE_FIELDS))
    if unknown:
        raise InvalidValue(unknown[0], f"unknown provenance field; known: {PROVENANCE_FIELDS}")
    result: dict[str, Any] = {name: provenance.get(name) for name in PROVENANCE_FIELDS}
    if result["source_kind"] is None:
        raise InvalidValue("source_kind", "is required")
    check_choice("source_kind", result["source_kind"], SOURCE_KINDS)
    measured_on = result["measured_on"]
    if isinstance(measured_on, str):
        try:
            measured_on = dt.date.fromisoformat(measured_on)
        except ValueError:
            raise InvalidValue("measured_on", f"{measured_on!r} is not a YYYY-MM-DD date") from None
    if isinstance(measured_on, dt.datetime) or not (
        measured_on is None or isinstance(measured_on, dt.date)
    ):
        raise InvalidValue("measured_on", f"must be a date, got {type(measured_on).__name__}")
    result["measured_on"] = measured_on
    for name in ("reference", "facility", "contributor", "notes"):
        check_text(name, result[name])
    return result


def revision_provenance(revision: PolarRevision) -> dict[str, Any]:
    """The provenance fields of a stored revision."""
    return {name: getattr(revision, name) for name in PROVENANCE_FIELDS}


def store_polar(
    session: Session,
    *,
    airfoil_name: str,
    polar: Polar,
    provenance: Mapping[str, Any],
    supersedes_hash: str | None = None,
    actor: Actor,
) -> tuple[PolarRevision, bool]:
    """Store a polar as a new draft revision, or return the identical stored one.

    Parameters
    ----------
    airfoil_name : str
        An existing airfoil. If ``polar.thickness`` is set it must equal the airfoil's.
    polar : Polar
        The validated table with its conditions.
    provenance : mapping
        See :func:`normalise_provenance`.
    supersedes_hash : str, optional
        Full hash or unique prefix of the revision this one supersedes (same airfoil).
    actor : Actor
        Recorded in the audit trail (one event when a revision is created, none otherwise).

    Returns
    -------
    (PolarRevision, bool)
        The revision and whether it was created. Identical content (same hash) returns the
        stored revision untouched, also when another transaction stores it concurrently.

    Raises
    ------
    NotFound
        If the airfoil or the superseded revision does not exist.
    InvalidValue
        On bad provenance, a thickness that disagrees with the airfoil's, or a superseded
        revision of another airfoil.
    """
    airfoil = get_airfoil(session, airfoil_name)
    thickness = polar.thickness
    if thickness is not None and abs(thickness - airfoil.thickness) > THICKNESS_TOLERANCE:
        raise InvalidValue(
            "thickness",
            f"the polar says {thickness:g} but airfoil {airfoil_name!r} has {airfoil.thickness:g}",
        )
    fields = normalise_provenance(provenance)
    superseded = None
    if supersedes_hash is not None:
        superseded = get_revision(session, supersedes_hash)
        if superseded.airfoil_id != airfoil.id:
            raise InvalidValue(
                "supersedes_hash",
                f"revision {superseded.content_hash[:12]} belongs to airfoil "
                f"{superseded.airfoil.name!r}, not {airfoil_name!r}",
            )
    content_hash = polar_content_hash(
        polar,
        airfoil_name=airfoil_name,
        provenance=fields,
        supersedes_hash=None if superseded is None else superseded.content_hash,
    )
    existing = _by_full_hash(session, content_hash)
    if existing is not None:
        return existing, False
    revision = PolarRevision(
        content_hash=content_hash,
        airfoil=airfoil,
        reynolds=polar.reynolds,
        mach=polar.mach,
        surface=polar.surface,
        n_rows=polar.size,
        has_cm=polar.has_cm,
        alpha_deg=canonical_array_bytes(polar.alpha_deg),
        cl=canonical_array_bytes(polar.cl),
        cd=canonical_array_bytes(polar.cd),
        cm=None if polar.cm is None else canonical_array_bytes(polar.cm),
        supersedes_id=None if superseded is None else superseded.id,
        review_state="draft",
        created_by=actor.name,
        **fields,
    )
    # the same content may be committed by a concurrent transaction (unique content_hash)
    revision, created = insert_or_winner(
        session, revision, lambda: _by_full_hash(session, content_hash)
    )
    if not created:
        return revision, False
    record_event(
        session,
        actor=actor,
        action="polar.store",
        object_kind="polar_revision",
        object_key=content_hash,
        after_hash=content_hash,
        detail={
            "airfoil": airfoil_name,
            "reynolds": polar.reynolds,
            "mach": polar.mach,
            "surface": polar.surface,
            "rows": polar.size,
            "supersedes": None if superseded is None else superseded.content_hash,
        },
    )
    return revision, True


def _by_full_hash(session: Session, content_hash: str) -> PolarRevision | None:
    return session.scalars(
        select(PolarRevision).where(PolarRevision.content_hash == content_hash)
    ).one_or_none()


def load_polar(revision: PolarRevision) -> Polar:
    """Rebuild the :class:`Polar` of a stored revision, bit for bit.

    The thickness comes from the airfoil; the history holds one step
    ``{"step": "stored-revision", "content_hash": ...}``.

    Raises
    ------
    IntegrityProblem
        If a stored column does not hold ``n_rows`` values or ``cm`` disagrees with
        ``has_cm``.
    """
    columns = {}
    for name in ("alpha_deg", "cl", "cd", "cm"):
        blob = getattr(revision, name)
        if blob is None:
            continue
        try:
            columns[name] = decode_array_bytes(bytes(blob), (revision.n_rows,))
        except ValueError as exc:
            raise IntegrityProblem(
                f"revision {revision.content_hash}: column {name}: {exc}"
            ) from None
    if ("cm" in columns) != revision.has_cm:
        raise IntegrityProblem(
            f"revision {revision.content_hash}: has_cm={revision.has_cm} but cm is "
            f"{'present' if 'cm' in columns else 'missing'}"
        )
    return Polar(
        alpha_deg=columns["alpha_deg"],
        cl=columns["cl"],
        cd=columns["cd"],
        cm=columns.get("cm"),
        reynolds=revision.reynolds,
        mach=revision.mach,
        thickness=revision.airfoil.thickness,
        surface=revision.surface,
        history=({"step": "stored-revision", "content_hash": revision.content_hash},),
        assume_degrees=True,
    )


def verify_revision(revision: PolarRevision) -> str:
    """Recompute a stored revision's content hash; return it, or raise
    :class:`IntegrityProblem` if it differs from the stored one."""
    supersedes = revision.supersedes.content_hash if revision.supersedes is not None else None
    recomputed = polar_content_hash(
        load_polar(revision),
        airfoil_name=revision.airfoil.name,
        provenance=revision_provenance(revision),
        supersedes_hash=supersedes,
    )
    if recomputed != revision.content_hash:
        raise IntegrityProblem(
            f"revision {revision.content_hash}: content now hashes to {recomputed}"
        )
    return recomputed


def get_revision(session: Session, key: str) -> PolarRevision:
    """The revision whose content hash is ``key`` or starts with it (at least 8 digits).

    Raises
    ------
    NotFound, AmbiguousKey, InvalidValue
    """
    return find_by_hash(session, PolarRevision, "polar revision", key)


def list_revisions(
    session: Session,
    *,
    airfoil: str | None = None,
    family: str | None = None,
    reynolds: float | None = None,
    surface: str | None = None,
    review_state: str | None = None,
) -> Sequence[PolarRevision]:
    """Revisions matching every filter given, by airfoil name, Reynolds number, surface,
    then storage order. ``reynolds`` matches exactly."""
    statement = select(PolarRevision).join(Airfoil)
    if airfoil is not None:
        statement = statement.where(Airfoil.name == airfoil)
    if family is not None:
        statement = statement.join(Family, Airfoil.family_id == Family.id).where(
            Family.name == family
        )
    if reynolds is not None:
        statement = statement.where(PolarRevision.reynolds == float(reynolds))
    if surface is not None:
        statement = statement.where(PolarRevision.surface == surface)
    if review_state is not None:
        check_choice("review_state", review_state, REVIEW_STATES)
        statement = statement.where(PolarRevision.review_state == review_state)
    statement = statement.order_by(
        Airfoil.name, PolarRevision.reynolds, PolarRevision.surface, PolarRevision.id
    )
    return session.scalars(statement).all()


def set_review_state(
    session: Session,
    *,
    content_hash: str,
    state: str,
    reason: str | None = None,
    replaced_by_hash: str | None = None,
    actor: Actor,
) -> PolarRevision:
    """Move a revision through review: draft -> approved, draft/approved -> deprecated.

    Parameters
    ----------
    content_hash : str
        Full hash or unique prefix of the revision.
    state : str
        The new state.
    reason : str, optional
        Why; required (non-blank) for deprecation.
    replaced_by_hash : str, optional
        Only with deprecation: the revision that replaces this one.

    Raises
    ------
    InvalidTransition
        If the change is not allowed, a deprecation has no reason, or a replacement is
        given for another state or names the revision itself.
    NotFound
        If either revision does not exist.
    """
    check_choice("state", state, REVIEW_STATES)
    check_text("reason", reason)
    revision = get_revision(session, content_hash)
    current = revision.review_state
    key = revision.content_hash
    if state not in REVIEW_TRANSITIONS[current]:
        allowed = ", ".join(REVIEW_TRANSITIONS[current]) or "none"
        raise InvalidTransition(key, current, state, f"allowed from {current}: {allowed}")
    if state == "deprecated" and not (reason and reason.strip()):
        raise InvalidTransition(key, current, state, "deprecation needs a reason")
    replacement = None
    if replaced_by_hash is not None:
        if state != "deprecated":
            raise InvalidTransition(key, current, state, "only a deprecation names a replacement")
        try:
            replacement = get_revision(session, replaced_by_hash)
        except NotFound:
            raise NotFound("polar revision (replacement)", replaced_by_hash) from None
        if replacement.id == revision.id:
            raise InvalidTransition(key, current, state, "a revision cannot replace itself")
    revision.review_state = state
    revision.review_reason = reason
    revision.replaced_by_id = None if replacement is None else replacement.id
    session.flush()
    record_event(
        session,
        actor=actor,
        action="polar.review",
        object_kind="polar_revision",
        object_key=key,
        before_hash=key,
        after_hash=key,
        detail={
            "from": current,
            "to": state,
            "reason": reason,
            "replaced_by": None if replacement is None else replacement.content_hash,
        },
    )
    return revision
