"""Content hashes of stored polars, recipes, blade definitions and derived tables.

Pure functions, no I/O. Every hash is the lower-case hexadecimal SHA-256 (FIPS 180-4) of a
byte string built as described below. **The canonical form is a compatibility promise**: the
same content gives the same hash on SQLite and PostgreSQL, on every platform, and in every
later version of polarsvc. A change to anything in this docstring needs a new ``format`` tag
(``...v2``) and a migration of the stored hashes.

Canonical array bytes (:func:`canonical_array_bytes`)
    The values converted to IEEE 754 binary64, flattened in C (row-major) order, each written
    as 8 little-endian bytes. Negative zero is written as positive zero, every NaN as the
    single quiet NaN ``0x7FF8000000000000`` (bytes ``00 00 00 00 00 00 f8 7f``). Infinities
    are kept as they are.

Array digest (:func:`array_digest`)
    ``sha256(canonical_json({"dtype": "float64-le", "shape": [n0, n1, ...]}) + b"\\n" +
    canonical_array_bytes)``, hex. The header makes arrays of equal bytes but different
    shapes distinct.

Canonical JSON (:func:`canonical_json`)
    UTF-8 JSON with object keys sorted by code point, no whitespace (``,`` and ``:``
    separators), non-ASCII characters written literally (no ``\\u`` escapes, no Unicode
    normalisation). Keys must be strings. ``None`` -> ``null``, booleans -> ``true``/``false``,
    integers in decimal, floats as Python's ``repr`` (the shortest string that reads back to
    the same binary64, e.g. ``0.1``, ``1000000.0``, ``1e+16``); ``-0.0`` is written ``0.0``;
    NaN and infinities are refused. The type matters: the integer ``1`` and the float ``1.0``
    are written differently. Tuples and lists become arrays; numpy scalars and arrays become
    the equivalent Python numbers and (nested) lists; a :class:`datetime.date` becomes its ISO
    string ``"YYYY-MM-DD"``; an aware :class:`datetime.datetime` becomes its ISO string in UTC
    (``"2026-01-02T03:04:05+00:00"``); a naive datetime is refused.

Polar content hash (:func:`polar_content_hash`)
    ``sha256(canonical_json(document))`` with the document::

        {"format": "polarsvc.polar.v1",
         "airfoil": <airfoil name>,
         "alpha_deg": <array digest>, "cl": <array digest>, "cd": <array digest>,
         "cm": <array digest or null>,
         "reynolds": <float or null>, "mach": <float>, "surface": <str>,
         "provenance": {"source_kind", "reference", "facility", "measured_on",
                        "contributor", "notes": <str or null each>},
         "supersedes": <content hash of the superseded revision or null>}

    The arrays are those of the validated :class:`~polarsvc.aero.polar.Polar` (sorted by
    angle). Every provenance field is always present (``null`` when not given). Not part of
    the hash: the relative thickness (a property of the airfoil, fixed by its name), the
    polar's ``history``, who stored it and when, and its review state.

Recipe hash (:func:`recipe_hash`)
    ``sha256(canonical_json({"format": "polarsvc.recipe.v1", "recipe": <recipe>}))``.

Table content hash (:func:`table_content_hash`)
    ``sha256(canonical_json({"format": "polarsvc.table.v1", "alpha_deg": <array digest>,
    "columns": [<array digest>, ...]}))``, columns in the order given.

Result content hash (:func:`result_content_hash`)
    ``sha256(canonical_json({"format": "polarsvc.result.v1", "arrays": [[<name>, <array
    digest>], ...]}))``, named arrays of any shapes in the order given (rotor results).

Blade content hash (:func:`blade_content_hash`)
    ``sha256(canonical_json({"format": "polarsvc.blade.v1", "name": <name>,
    "definition": <definition>}))``.

A regression test vector (a three-row polar and its hash) lives in
``tests/store/test_hashing.py``.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import json
import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from polarsvc.provenance import PROVENANCE_FIELDS

if TYPE_CHECKING:
    from polarsvc.aero.polar import Polar

__all__ = [
    "PROVENANCE_FIELDS",
    "array_digest",
    "blade_content_hash",
    "canonical_array_bytes",
    "canonical_json",
    "decode_array_bytes",
    "polar_content_hash",
    "polar_hash_document",
    "recipe_hash",
    "result_content_hash",
    "table_content_hash",
]


_CANONICAL_NAN_BITS = np.uint64(0x7FF8000000000000)
_ABS_MASK = np.uint64(0x7FFFFFFFFFFFFFFF)
_EXPONENT_MASK = np.uint64(0x7FF0000000000000)
_LITTLE_F8 = np.dtype("<f8")


def canonical_array_bytes(values: ArrayLike) -> bytes:
    """The canonical little-endian binary64 bytes of an array (see the module docstring).

    Parameters
    ----------
    values : array_like
        Any array convertible to float64; flattened in C order.

    Returns
    -------
    bytes
        ``8 * size`` bytes.
    """
    array = np.array(values, dtype=_LITTLE_F8, copy=True, order="C")
    _canonicalise(array.reshape(-1))
    return array.tobytes()


def _canonicalise(values: NDArray[np.float64]) -> None:
    """Rewrite a one-dimensional little-endian float64 array in place into its canonical
    values: -0.0 as +0.0, every NaN as the quiet NaN ``0x7FF8000000000000``. It works on
    the bit patterns (no float arithmetic, so signalling NaNs raise nothing): with the sign
    bit cleared, zero is 0 and a NaN is anything above the infinity pattern."""
    bits = values.view("<u8")
    magnitude = bits & _ABS_MASK
    np.copyto(bits, 0, where=magnitude == 0)
    np.copyto(bits, _CANONICAL_NAN_BITS, where=magnitude > _EXPONENT_MASK)


def decode_array_bytes(data: bytes, shape: tuple[int, ...] | None = None) -> NDArray[np.float64]:
    """Read canonical bytes back into a native float64 array (a writable copy).

    Parameters
    ----------
    data : bytes
        Canonical bytes as written by :func:`canonical_array_bytes`.
    shape : tuple of int, optional
        Shape to give the result; one-dimensional when omitted.

    Raises
    ------
    ValueError
        If the byte count is not a multiple of 8 or does not match ``shape``.
    """
    if len(data) % 8:
        raise ValueError(f"array bytes: length {len(data)} is not a multiple of 8")
    array = np.frombuffer(data, dtype=_LITTLE_F8).astype(np.float64)
    if shape is not None:
        expected = math.prod(shape)
        if expected != array.size:
            raise ValueError(f"array bytes: {array.size} values do not fill shape {shape}")
        array = array.reshape(shape)
    return array


def _digest_of(shape: tuple[int, ...], data: Any) -> str:
    """The array digest of canonical bytes ``data`` (bytes or a buffer; hashed in place)."""
    digest = hashlib.sha256(canonical_json({"dtype": "float64-le", "shape": list(shape)}))
    digest.update(b"\n")
    digest.update(data)
    return digest.hexdigest()


def _canonical_arrays(arrays: list[NDArray[np.float64]]) -> tuple[list[str], bytearray]:
    """The array digest of each array and the canonical bytes of all of them, in order.

    Each value is converted and canonicalised once, straight into the one buffer that is
    returned, and hashed in place: a multi-megabyte table costs one allocation and one
    pass of SHA-256, no further copies."""
    sizes = [int(a.size) for a in arrays]
    payload = bytearray(8 * sum(sizes))
    buffer = np.frombuffer(payload, dtype=_LITTLE_F8)
    digests = []
    start = 0
    for array, size in zip(arrays, sizes, strict=True):
        part = buffer[start:start + size]
        part[...] = array.reshape(-1)
        _canonicalise(part)
        digests.append(_digest_of(array.shape, memoryview(part).cast("B")))
        start += size
    return digests, payload


def array_digest(values: ArrayLike) -> str:
    """SHA-256 hex digest of an array's shape header and canonical bytes."""
    array = np.asarray(values, dtype=np.float64)
    return _digest_of(array.shape, canonical_array_bytes(array))


def _canonical_value(value: Any, path: str) -> Any:
    # bool before int: bool is a subclass of int
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, (int, np.integer)):
        return int(value)
    if isinstance(value, (float, np.floating)):
        number = float(value)
        if not math.isfinite(number):
            raise ValueError(f"canonical JSON: {path or 'value'} is {number!r}, not finite")
        return number + 0.0
    if isinstance(value, _dt.datetime):
        if value.tzinfo is None or value.utcoffset() is None:
            raise ValueError(f"canonical JSON: {path or 'value'} is a naive datetime")
        return value.astimezone(_dt.UTC).isoformat()
    if isinstance(value, _dt.date):
        return value.isoformat()
    if isinstance(value, np.ndarray):
        return _canonical_value(value.tolist(), path)
    if isinstance(value, Mapping):
        result = {}
        for key, item in value.items():
            if not isinstance(key, str):
                raise TypeError(f"canonical JSON: key {key!r} at {path or 'top'} is not a string")
            result[key] = _canonical_value(item, f"{path}.{key}" if path else key)
        return result
    if isinstance(value, (list, tuple)):
        return [_canonical_value(item, f"{path}[{i}]") for i, item in enumerate(value)]
    raise TypeError(
        f"canonical JSON: {path or 'value'} has unsupported type {type(value).__name__}"
    )


def canonical_json(obj: Any) -> bytes:
    """The canonical JSON bytes of ``obj`` (see the module docstring).

    Raises
    ------
    ValueError
        On NaN or infinite floats, or naive datetimes; the message names the path.
    TypeError
        On non-string keys or values of unsupported types.
    """
    return json.dumps(
        _canonical_value(obj, ""),
        sort_keys=True,
        separators=(",", ":"),
        ensure_ascii=False,
        allow_nan=False,
    ).encode("utf-8")


def _sha256_json(document: Mapping[str, Any]) -> str:
    return hashlib.sha256(canonical_json(document)).hexdigest()


def _canonical_provenance(provenance: Mapping[str, Any]) -> dict[str, str | None]:
    unknown = sorted(set(provenance) - set(PROVENANCE_FIELDS))
    if unknown:
        raise ValueError(
            f"provenance: unknown field(s) {', '.join(unknown)}; "
            f"known fields: {', '.join(PROVENANCE_FIELDS)}"
        )
    result: dict[str, str | None] = {}
    for name in PROVENANCE_FIELDS:
        value = provenance.get(name)
        if isinstance(value, _dt.datetime):
            raise TypeError(f"provenance: field '{name}' must be a date, not a datetime")
        if isinstance(value, _dt.date):
            value = value.isoformat()
        if value is not None and not isinstance(value, str):
            raise TypeError(
                f"provenance: field '{name}' must be a string or None, got {type(value).__name__}"
            )
        result[name] = value
    return result


def polar_hash_document(
    polar: Polar,
    *,
    airfoil_name: str,
    provenance: Mapping[str, Any],
    supersedes_hash: str | None = None,
) -> dict[str, Any]:
    """The document whose canonical JSON is hashed by :func:`polar_content_hash`."""
    return {
        "format": "polarsvc.polar.v1",
        "airfoil": airfoil_name,
        "alpha_deg": array_digest(polar.alpha_deg),
        "cl": array_digest(polar.cl),
        "cd": array_digest(polar.cd),
        "cm": None if polar.cm is None else array_digest(polar.cm),
        "reynolds": None if polar.reynolds is None else float(polar.reynolds),
        "mach": float(polar.mach),
        "surface": polar.surface,
        "provenance": _canonical_provenance(provenance),
        "supersedes": supersedes_hash,
    }


def polar_content_hash(
    polar: Polar,
    *,
    airfoil_name: str,
    provenance: Mapping[str, Any],
    supersedes_hash: str | None = None,
) -> str:
    """Content hash of a polar revision: table, conditions, airfoil name, provenance and the
    hash of the revision it supersedes (see the module docstring for the exact form).

    Parameters
    ----------
    polar : Polar
        The validated table.
    airfoil_name : str
        Name of the airfoil the table belongs to.
    provenance : mapping
        Any of :data:`PROVENANCE_FIELDS`; values are strings or None (``measured_on`` may be
        a :class:`datetime.date`). Unknown keys are refused.
    supersedes_hash : str, optional
        Content hash of the revision this one supersedes.

    Returns
    -------
    str
        64 lower-case hexadecimal digits.
    """
    return _sha256_json(
        polar_hash_document(
            polar,
            airfoil_name=airfoil_name,
            provenance=provenance,
            supersedes_hash=supersedes_hash,
        )
    )


def recipe_hash(recipe: Mapping[str, Any]) -> str:
    """Hash of a derivation recipe (the cache key of a derived table)."""
    return _sha256_json({"format": "polarsvc.recipe.v1", "recipe": recipe})


def canonical_table(alpha_deg: ArrayLike, *columns: ArrayLike) -> tuple[str, bytearray]:
    """The content hash of a derived table and its payload: the canonical bytes of the
    angle column followed by those of each coefficient array, in order (each value
    converted once, for hashing and storing alike; a bytearray, stored as it is).

    Parameters
    ----------
    alpha_deg : array_like
        Angle of attack [deg], one-dimensional.
    *columns : array_like
        Coefficient arrays whose last axis runs along ``alpha_deg``.

    Raises
    ------
    ValueError
        If ``alpha_deg`` is not one-dimensional or a column's last axis does not match it.
    """
    alpha = np.asarray(alpha_deg, dtype=np.float64)
    if alpha.ndim != 1:
        raise ValueError(f"alpha_deg: expected one dimension, got shape {alpha.shape}")
    arrays = [alpha]
    for index, column in enumerate(columns):
        array = np.asarray(column, dtype=np.float64)
        if array.ndim == 0 or array.shape[-1] != alpha.size:
            raise ValueError(
                f"column {index}: shape {array.shape} does not end with {alpha.size} angles"
            )
        arrays.append(array)
    digests, payload = _canonical_arrays(arrays)
    content_hash = _sha256_json(
        {"format": "polarsvc.table.v1", "alpha_deg": digests[0], "columns": digests[1:]}
    )
    return content_hash, payload


def table_content_hash(alpha_deg: ArrayLike, *columns: ArrayLike) -> str:
    """Hash of a derived table: the angle column and the coefficient arrays, in order
    (see :func:`canonical_table`)."""
    return canonical_table(alpha_deg, *columns)[0]


def canonical_result(arrays: Mapping[str, ArrayLike]) -> tuple[str, bytearray]:
    """The content hash of a result made of named arrays of any shapes (module docstring)
    and its payload: the canonical bytes of each array, in order."""
    if not arrays:
        raise ValueError("a result needs at least one array")
    for name in arrays:
        if not isinstance(name, str) or not name:
            raise ValueError(f"array names must be non-empty strings, got {name!r}")
    digests, payload = _canonical_arrays(
        [np.asarray(values, dtype=np.float64) for values in arrays.values()]
    )
    named = [[name, digest] for name, digest in zip(arrays, digests, strict=True)]
    return _sha256_json({"format": "polarsvc.result.v1", "arrays": named}), payload


def result_content_hash(arrays: Mapping[str, ArrayLike]) -> str:
    """Hash of a result of named arrays (see :func:`canonical_result`)."""
    return canonical_result(arrays)[0]


def blade_content_hash(*, name: str, definition: Mapping[str, Any]) -> str:
    """Hash of a blade definition revision (its name and canonical definition)."""
    return _sha256_json({"format": "polarsvc.blade.v1", "name": name, "definition": definition})
