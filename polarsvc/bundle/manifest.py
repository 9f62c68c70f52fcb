"""The manifest of a bundle and its file records."""

from __future__ import annotations

import datetime as dt
import hashlib
from dataclasses import dataclass
from typing import Any

from polarsvc.bundle.layout import _HASH, FORMAT_TAG, MANIFEST_FILE, BundleError
from polarsvc.bundle.text import _timestamp_text, _Where
from polarsvc.hashing import canonical_json


@dataclass(frozen=True)
class BundleFile:
    """One file of a bundle as listed in its manifest."""

    path: str
    size: int
    sha256: str

    def as_dict(self) -> dict[str, Any]:
        return {"path": self.path, "sha256": self.sha256, "size": self.size}


@dataclass(frozen=True)
class BundleManifest:
    """The manifest of a bundle: format, origin, scope and the checksummed file list.

    ``family`` is None for a whole-database bundle. ``files`` is sorted by path.
    """

    format: str
    software_version: str
    created_at: dt.datetime
    family: str | None
    files: tuple[BundleFile, ...]

    @property
    def files_sha256(self) -> str:
        """SHA-256 hex of the canonical JSON of the sorted file list."""
        listing = [item.as_dict() for item in sorted(self.files, key=lambda f: f.path)]
        return hashlib.sha256(canonical_json(listing)).hexdigest()

    @property
    def scope(self) -> dict[str, Any]:
        if self.family is None:
            return {"kind": "database", "family": None}
        return {"kind": "family", "family": self.family}

    def as_dict(self) -> dict[str, Any]:
        return {
            "format": self.format,
            "software_version": self.software_version,
            "created_at": _timestamp_text(self.created_at),
            "scope": self.scope,
            "files": [item.as_dict() for item in self.files],
            "files_sha256": self.files_sha256,
        }

    @classmethod
    def from_dict(cls, document: object) -> BundleManifest:
        """Read a manifest document; :class:`BundleError` naming ``manifest.json``."""
        where = _Where(MANIFEST_FILE)
        top = where.mapping(document, "manifest")
        format_tag = top.get("format")
        if format_tag != FORMAT_TAG:
            raise BundleError(
                MANIFEST_FILE, f"unknown format {format_tag!r}; this version reads {FORMAT_TAG!r}"
            )
        scope = where.mapping(top.get("scope"), "scope")
        kind = where.text(scope, "kind", "scope")
        if kind not in ("database", "family"):
            raise BundleError(MANIFEST_FILE, f"scope.kind: {kind!r} is not database or family")
        family = where.text(scope, "family", "scope") if kind == "family" else None
        files = []
        listing = top.get("files")
        if not isinstance(listing, list):
            raise BundleError(MANIFEST_FILE, "files: expected a list")
        for index, entry in enumerate(listing):
            item = where.mapping(entry, f"files[{index}]")
            size = item.get("size")
            digest = item.get("sha256")
            if isinstance(size, bool) or not isinstance(size, int) or size < 0:
                raise BundleError(MANIFEST_FILE, f"files[{index}].size: expected a count")
            if not isinstance(digest, str) or not _HASH.fullmatch(digest):
                raise BundleError(MANIFEST_FILE, f"files[{index}].sha256: not a sha256 hex")
            files.append(BundleFile(where.text(item, "path", f"files[{index}]"), size, digest))
        manifest = cls(
            format=format_tag,
            software_version=where.text(top, "software_version", "manifest"),
            created_at=where.timestamp(top, "created_at", "manifest"),
            family=family,
            files=tuple(sorted(files, key=lambda f: f.path)),
        )
        if len({item.path for item in files}) != len(files):
            raise BundleError(MANIFEST_FILE, "files: a path is listed twice")
        if top.get("files_sha256") != manifest.files_sha256:
            raise BundleError(
                MANIFEST_FILE,
                f"files_sha256 {top.get('files_sha256')!r} does not match the file list "
                f"({manifest.files_sha256})",
            )
        return manifest
