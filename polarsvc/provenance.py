"""The vocabulary of provenance, shared by the file formats, the hashing and the store."""

from __future__ import annotations

SOURCE_KINDS: tuple[str, ...] = ("wind-tunnel", "cfd", "panel-method", "synthetic", "other")
"""Where a polar came from: a measurement, a computation, or synthetic (demo) data."""

PROVENANCE_FIELDS: tuple[str, ...] = (
    "source_kind",
    "reference",
    "facility",
    "measured_on",
    "contributor",
    "notes",
)
"""The provenance of a polar revision; all of them enter its content hash."""
