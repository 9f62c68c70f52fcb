"""Text helpers shared by export and import: timestamps, checksums, the all-quoted CSV of
the audit trail and typed access to JSON values."""

from __future__ import annotations

import datetime as dt
import hashlib
from collections.abc import Iterable, Mapping, Sequence
from typing import Any

from polarsvc.bundle.layout import _HASH, BundleError


def _timestamp_text(value: dt.datetime) -> str:
    return value.astimezone(dt.UTC).isoformat()


def _sha256(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


def _csv_cell(value: str | None) -> str:
    return "" if value is None else '"' + value.replace('"', '""') + '"'


def _write_csv(rows: Iterable[Sequence[str | None]]) -> str:
    """CSV text with every value quoted and None as an empty unquoted field."""
    return "".join(",".join(_csv_cell(value) for value in row) + "\n" for row in rows)



def _read_csv(text: str, file: str) -> list[list[str | None]]:
    """Rows of a CSV whose values are all quoted; an empty unquoted field is None."""
    rows: list[list[str | None]] = []
    row: list[str | None] = []
    position, line, end = 0, 1, len(text)
    while position < end:
        value: str | None
        if text[position] == '"':
            parts = []
            position += 1
            while True:
                close = text.find('"', position)
                if close < 0:
                    raise BundleError(file, f"line {line}: a quoted value is not closed")
                parts.append(text[position:close])
                if text.startswith('"', close + 1):
                    parts.append('"')
                    position = close + 2
                    continue
                position = close + 1
                break
            value = "".join(parts)
            line += value.count("\n")
        else:
            stop = position
            while stop < end and text[stop] not in ",\r\n":
                stop += 1
            if stop > position:
                raise BundleError(
                    file, f"line {line}: unquoted value {text[position:stop][:40]!r} "
                    "(every value is quoted; an empty field means null)"
                )
            value = None
        row.append(value)
        if text.startswith(",", position):
            position += 1
            if position == end:
                row.append(None)
            continue
        if text.startswith("\r\n", position):
            position += 2
        elif text.startswith("\n", position):
            position += 1
        elif position < end:
            raise BundleError(file, f"line {line}: unexpected text after a quoted value")
        rows.append(row)
        row = []
        line += 1
    if row:
        rows.append(row)
    return rows


class _Where:
    """Typed access to JSON values, with errors naming the file and the entry."""

    def __init__(self, file: str):
        self.file = file

    def fail(self, where: str, message: str) -> BundleError:
        return BundleError(self.file, f"{where}: {message}")

    def mapping(self, value: object, where: str) -> Mapping[str, Any]:
        if not isinstance(value, dict):
            raise self.fail(where, "expected an object")
        return value

    def entries(self, document: object) -> list[Mapping[str, Any]]:
        if not isinstance(document, list):
            raise BundleError(self.file, "expected a list of objects")
        return [self.mapping(entry, f"entry {index}") for index, entry in enumerate(document)]

    def text(self, entry: Mapping[str, Any], key: str, where: str) -> str:
        value = entry.get(key)
        if not isinstance(value, str):
            raise self.fail(f"{where}.{key}", f"expected text, got {type(value).__name__}")
        return value

    def optional_text(self, entry: Mapping[str, Any], key: str, where: str) -> str | None:
        if key not in entry:
            raise self.fail(f"{where}.{key}", "missing (give null for none)")
        return None if entry[key] is None else self.text(entry, key, where)

    def optional_hash(self, entry: Mapping[str, Any], key: str, where: str) -> str | None:
        value = self.optional_text(entry, key, where)
        if value is not None and not _HASH.fullmatch(value):
            raise self.fail(f"{where}.{key}", f"{value[:70]!r} is not a content hash")
        return value

    def number(self, entry: Mapping[str, Any], key: str, where: str) -> float:
        value = entry.get(key)
        if isinstance(value, bool) or not isinstance(value, int | float):
            raise self.fail(f"{where}.{key}", f"expected a number, got {type(value).__name__}")
        return float(value)

    def timestamp(self, entry: Mapping[str, Any], key: str, where: str) -> dt.datetime:
        text = self.text(entry, key, where)
        try:
            value = dt.datetime.fromisoformat(text)
        except ValueError:
            raise self.fail(f"{where}.{key}", f"{text[:40]!r} is not an ISO timestamp") from None
        if value.tzinfo is None or value.utcoffset() is None:
            raise self.fail(f"{where}.{key}", f"{text!r} has no UTC offset")
        return value.astimezone(dt.UTC)
