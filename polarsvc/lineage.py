"""Lineage: where every number of a derived table came from, and the reverse question of
what a stored revision has fed.

The tree of a derived table (or blade set) holds, at the root, the recipe (kind, steps,
methods, parameters, software version) and, below it, every stored revision it used with
its provenance, review state, who uploaded it and who reviewed it (from the audit trail),
and the blade definition revision for a blade set.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from typing import Any

from sqlalchemy import select
from sqlalchemy.orm import Session

from polarsvc.store import derived as derived_store
from polarsvc.store import polars as polar_store
from polarsvc.store.errors import StoreError
from polarsvc.store.models import AuditEvent, DerivedTable, PolarRevision

STEP_NAMES = {
    "resampled": ["resample"],
    "extended": ["extend_full_range", "resample"],
    "augmented": ["extend_full_range", "augment_rotation", "resample"],
    "blended": [
        "extend_full_range (each member)", "resample (common grid)",
        "interpolate_reynolds (log10 Re)", "interpolate_thickness",
    ],
    "blade-set": [
        "extend_full_range (each member)", "resample (common grid)", "station_reynolds",
        "interpolate_reynolds (log10 Re)", "interpolate_thickness", "augment_rotation",
    ],
    "rotor": [
        "blade set (station tables)", "solve (steady BEM, Ning 2014)", "cp_surface",
        "power_curve", "annual_energy",
    ],
}


def _reviews(session: Session, key: str) -> list[dict[str, Any]]:
    events = session.scalars(
        select(AuditEvent)
        .where(AuditEvent.object_key == key, AuditEvent.action == "polar.review")
        .order_by(AuditEvent.id)
    ).all()
    reviews = []
    for event in events:
        detail = json.loads(event.detail or "{}")
        reviews.append(
            {
                "to": detail.get("to"),
                "reason": detail.get("reason"),
                "by": event.actor_name,
                "role": event.actor_role,
                "at": event.occurred_at.isoformat(),
            }
        )
    return reviews


def revision_node(session: Session, revision: PolarRevision) -> dict[str, Any]:
    """A stored revision as a lineage leaf, with a fresh integrity check of its content."""
    try:
        polar_store.verify_revision(revision)
        intact = True
    except StoreError:
        intact = False
    provenance = {
        key: (value.isoformat() if hasattr(value, "isoformat") else value)
        for key, value in polar_store.revision_provenance(revision).items()
    }
    return {
        "node": "revision",
        "content_hash": revision.content_hash,
        "airfoil": revision.airfoil.name,
        "family": revision.airfoil.family.name if revision.airfoil.family else None,
        "thickness": revision.airfoil.thickness,
        "conditions": {
            "reynolds": revision.reynolds, "mach": revision.mach, "surface": revision.surface
        },
        "provenance": provenance,
        "uploaded_by": revision.created_by,
        "uploaded_at": revision.created_at.isoformat(),
        "review_state": revision.review_state,
        "reviews": _reviews(session, revision.content_hash),
        "supersedes": revision.supersedes.content_hash if revision.supersedes else None,
        "replaced_by": revision.replaced_by.content_hash if revision.replaced_by else None,
        "content_intact": intact,
    }


def derived_node(session: Session, row: DerivedTable) -> dict[str, Any]:
    """The lineage tree of a cached derived table."""
    recipe = derived_store.derived_recipe(row)
    by_hash = {r.content_hash: r for r in row.inputs}
    inputs = [
        revision_node(session, by_hash[h]) if h in by_hash
        else {"node": "revision", "content_hash": h, "missing": True}
        for h in recipe["inputs"]["revisions"]
    ]
    node: dict[str, Any] = {
        "node": "derived",
        "kind": row.kind,
        "recipe_hash": row.recipe_hash,
        "content_hash": row.content_hash,
        "created_at": row.created_at.isoformat(),
        "software": recipe.get("software"),
        "steps": STEP_NAMES.get(row.kind, []),
        "params": recipe.get("params"),
        "inputs": inputs,
    }
    blade_set_key = recipe["inputs"].get("blade_set")
    if blade_set_key is not None:
        used = derived_store.get_derived(session, recipe_hash=blade_set_key)
        node["blade_set"] = (
            derived_node(session, used) if used is not None
            else {"node": "derived", "kind": "blade-set", "recipe_hash": blade_set_key,
                  "missing": True}
        )
    if row.blade is not None:
        node["blade"] = {
            "node": "blade",
            "name": row.blade.name,
            "content_hash": row.blade.content_hash,
            "uploaded_by": row.blade.created_by,
            "uploaded_at": row.blade.created_at.isoformat(),
        }
    return node


def _who(name: str | None, role: str | None = None) -> str:
    """A token name in the text form; a hidden one (None) is described by its role."""
    if name is not None:
        return name
    return f"a {role}" if role else "a token (named to admins only)"


def lineage_of(session: Session, rows: Sequence[DerivedTable]) -> dict[str, Any]:
    """The lineage of the tables a hash named: the tree of one table, or, for a content hash
    that several recipes gave, a ``content`` node listing each recipe's tree (oldest
    first)."""
    if len(rows) == 1:
        return derived_node(session, rows[0])
    return {
        "node": "content",
        "content_hash": rows[0].content_hash,
        "recipes": [derived_node(session, row) for row in rows],
    }


def lineage_text(tree: dict[str, Any]) -> str:
    """The lineage tree as readable text (for the command line and plain-text answers)."""
    if tree.get("node") == "content":
        parts = [
            f"table {tree['content_hash']} is given by {len(tree['recipes'])} recipes "
            "(the same numbers):\n"
        ]
        for number, recipe_tree in enumerate(tree["recipes"], start=1):
            parts.append(f"\n[{number}] " + _derived_text(recipe_tree))
        return "".join(parts)
    return _derived_text(tree)


def _derived_text(tree: dict[str, Any]) -> str:
    software = tree.get("software") or {}
    lines = [
        f"{tree['kind']} table {tree['content_hash']}",
        f"  recipe {tree['recipe_hash']}",
        f"  computed by {software.get('name')} {software.get('version')} at {tree['created_at']}",
        "  steps: " + " -> ".join(tree["steps"]),
    ]
    for key, value in (tree.get("params") or {}).items():
        lines.append(f"  {key}: {json.dumps(value, sort_keys=True)}")
    if "blade" in tree:
        blade = tree["blade"]
        lines.append(
            f"  blade {blade['name']} {blade['content_hash']} "
            f"(stored by {_who(blade['uploaded_by'])} at {blade['uploaded_at']})"
        )
    if "blade_set" in tree:
        used = tree["blade_set"]
        state = "  NOT CACHED (recomputed from its recipe)" if used.get("missing") else (
            f" content {used['content_hash']}"
        )
        lines.append(f"  blade set: recipe {used['recipe_hash']}{state}")
    lines.append(f"  inputs ({len(tree['inputs'])} stored revisions):")
    for leaf in tree["inputs"]:
        if leaf.get("missing"):
            lines.append(f"    - {leaf['content_hash']}  MISSING from the database")
            continue
        conditions = leaf["conditions"]
        provenance = leaf["provenance"]
        reviews = "; ".join(
            f"{r['to']} by {_who(r['by'], r.get('role'))} at {r['at']}" for r in leaf["reviews"]
        )
        lines.append(
            f"    - {leaf['content_hash']}  {leaf['airfoil']} t/c={leaf['thickness']:g} "
            f"Re={conditions['reynolds']:g} {conditions['surface']}  [{leaf['review_state']}]"
            + ("" if leaf["content_intact"] else "  CONTENT DOES NOT MATCH ITS HASH")
        )
        lines.append(
            f"        source {provenance.get('source_kind')}: {provenance.get('reference')}"
            f" ({provenance.get('facility')}); uploaded by {_who(leaf['uploaded_by'])}"
            f" at {leaf['uploaded_at']}" + (f"; reviews: {reviews}" if reviews else "")
        )
    return "\n".join(lines) + "\n"
