"""Portable export bundles: a folder of open-format files holding families, airfoils, polar
revisions, blade definitions and the audit trail, and its verified import.

Layout (format tag :data:`FORMAT_TAG`)::

    manifest.json                    format, software version, created_at, scope, and for
                                     every other file its path, size [bytes] and sha256
    families.json                    [{name, description, created_at}]
    airfoils.json                    [{name, family, thickness, description, coordinates,
                                       created_at}]
    revisions.json                   one entry per revision, in storage order (below)
    polars/<airfoil>/<hash>.csv      the table of each revision (polarsvc.formats.polar_to_csv,
                                     floats written with repr: bit-exact on re-reading)
    blades.json                      [{content_hash, name, definition, created_at, created_by}]
    audit.csv                        the audit events of the scope, every column

A ``revisions.json`` entry holds ``content_hash``, ``airfoil``, ``file`` (the CSV path),
``conditions`` (reynolds, mach, surface), ``provenance`` (all six fields), ``supersedes``
and ``replaced_by`` (content hashes or null), ``review_state``, ``review_reason``,
``created_at`` and ``created_by``. ``revisions.json`` is authoritative for the provenance;
each CSV carries the provenance values that survive its one-line ``# key: value`` form (no
line break, no outer blanks, not empty) and the import checks that every value a CSV states
agrees with ``revisions.json``. The directory ``<airfoil>`` is the airfoil name with every
character outside ``A-Z a-z 0-9 . _ -`` replaced by ``_`` (and a leading ``.`` too); the
real name is in ``revisions.json`` and in the CSV.

Timestamps are ISO 8601 in UTC (``2026-01-02T03:04:05.123456+00:00``); JSON files are UTF-8
with sorted keys. ``audit.csv`` is RFC 4180 CSV with a header row (:data:`AUDIT_COLUMNS`)
where every value is quoted and an empty unquoted field means null (so that null and the
empty string stay distinct).

``manifest.json`` lists the files sorted by path; ``files_sha256`` is the SHA-256 hex of the
canonical JSON (:func:`polarsvc.hashing.canonical_json`) of that list of
``{"path", "sha256", "size"}`` objects. The manifest does not list itself.

Scope: the whole database, or one family (its airfoils, their revisions, the blades whose
definition names the family in ``"family"``, and the audit events whose object is one of
those). API tokens are never exported; derived tables are not either (they are a cache,
recomputed from their recipes on demand).
"""

from polarsvc.bundle.export import export_bundle
from polarsvc.bundle.layout import AIRFOILS_FILE as AIRFOILS_FILE
from polarsvc.bundle.layout import (
    AUDIT_COLUMNS,
    FORMAT_TAG,
    IMPORT_ACTION,
    BundleError,
)
from polarsvc.bundle.layout import AUDIT_FILE as AUDIT_FILE
from polarsvc.bundle.layout import BLADES_FILE as BLADES_FILE
from polarsvc.bundle.layout import FAMILIES_FILE as FAMILIES_FILE
from polarsvc.bundle.layout import MANIFEST_FILE as MANIFEST_FILE
from polarsvc.bundle.layout import POLAR_FOLDER as POLAR_FOLDER
from polarsvc.bundle.layout import REVISIONS_FILE as REVISIONS_FILE
from polarsvc.bundle.load import ImportReport, import_bundle
from polarsvc.bundle.manifest import BundleFile, BundleManifest
from polarsvc.bundle.read import verify_bundle
from polarsvc.bundle.text import _read_csv as _read_csv
from polarsvc.bundle.text import _write_csv as _write_csv

__all__ = [
    "AUDIT_COLUMNS",
    "FORMAT_TAG",
    "IMPORT_ACTION",
    "BundleError",
    "BundleFile",
    "BundleManifest",
    "ImportReport",
    "export_bundle",
    "import_bundle",
    "verify_bundle",
]
