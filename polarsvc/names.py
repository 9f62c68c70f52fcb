"""The grammar of names and the rule for free text: one implementation, used by the storage
functions (hence the HTTP API, the pages, the command line, uploads and bundle imports), by
the file readers and by every export that turns a name into a file name.

Names
-----
Airfoils, families, blades and API tokens are named by :data:`NAME_GRAMMAR`: 1 to
:data:`NAME_MAX_LENGTH` characters, ASCII letters and digits, space and ``. _ - + ( )``;
the first character a letter or a digit, no space at the end. So a name holds no path
separator, no control character, nothing a URL path, a shell or a file system reads
specially, and it compares the same way on SQLite and PostgreSQL. Examples: ``SKUA-210``,
``skua``, ``skerry-48``, ``SKUA 210 (tripped)``.

Free text
---------
Notes, references, descriptions, reasons and every other text input may hold any printable
character, tab, line feed and carriage return, but no other control character (U+0000 to
U+001F, U+007F to U+009F): PostgreSQL cannot store NUL at all, and the others only garble
logs and terminals. :func:`check_text` enforces that.

File names
----------
:func:`safe_file_stem` turns any stored name, also one stored before this grammar existed,
into a file-system-safe stem; :func:`path_inside` joins it under a destination folder and
refuses anything that would leave the folder.
"""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

NAME_MAX_LENGTH = 100
"""Longest name [characters]."""

NAME_PATTERN = r"^[A-Za-z0-9](?:[A-Za-z0-9 ._+()-]*[A-Za-z0-9._+()-])?$"
"""The name grammar as a regular expression (also declared in the OpenAPI schema)."""
NAME_GRAMMAR = re.compile(NAME_PATTERN)

TEXT_PATTERN = r"^[^\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]*$"
"""Free text as a regular expression: no control character but tab and line ends."""

_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")
_CONTROL_EXCEPT_LINES = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")
_UNSAFE_FILE_CHARACTERS = re.compile(r"[^A-Za-z0-9._+-]+")
FILE_STEM_MAX_LENGTH = 80
"""Longest stem :func:`safe_file_stem` returns [characters] (room for a suffix and a hash
within the usual 255-byte file-name limit)."""


class InvalidText(ValueError):
    """A name or text input breaks the rules of this module.

    Attributes
    ----------
    field : str
        The offending field or parameter.
    detail : str
        The message without the field.
    """

    def __init__(self, field: str, detail: str):
        self.field = field
        self.detail = detail
        super().__init__(f"field '{field}': {detail}")


def _describe_control(text: str, pattern: re.Pattern[str]) -> str | None:
    match = pattern.search(text)
    if match is None:
        return None
    return f"contains the control character U+{ord(match.group()):04X} at position {match.start()}"


def check_name(field: str, value: object) -> str:
    """Return ``value`` if it is a valid name (:data:`NAME_GRAMMAR`), else raise.

    Raises
    ------
    InvalidText
        Naming ``field`` and what is wrong (type, length, control or other character).
    """
    if not isinstance(value, str):
        raise InvalidText(field, f"a name must be text, got {type(value).__name__}")
    if not value:
        raise InvalidText(field, "a name must not be empty")
    if len(value) > NAME_MAX_LENGTH:
        raise InvalidText(field, f"a name has at most {NAME_MAX_LENGTH} characters, "
                                 f"got {len(value)}")
    control = _describe_control(value, _CONTROL)
    if control is not None:
        raise InvalidText(field, f"a name {control}")
    if not NAME_GRAMMAR.fullmatch(value):
        bad = next((c for c in value if not re.fullmatch(r"[A-Za-z0-9 ._+()-]", c)), None)
        if bad is not None:
            reason = f"the character {bad!r} is not allowed"
        else:
            reason = "it must start with a letter or digit and not end with a space"
        raise InvalidText(
            field,
            f"{value!r} is not a valid name: {reason} (allowed: ASCII letters and digits, "
            "space and . _ - + ( ); first a letter or digit)",
        )
    return value


def check_text(field: str, value: str) -> str:
    """Return ``value`` if it holds no control character other than tab, line feed and
    carriage return, else raise :class:`InvalidText` naming ``field``."""
    control = _describe_control(value, _CONTROL_EXCEPT_LINES)
    if control is not None:
        raise InvalidText(field, control)
    return value


def find_control(value: str) -> str | None:
    """The description of the first control character (tab and line ends allowed) in
    ``value``, or None: for callers that report the field themselves."""
    return _describe_control(value, _CONTROL_EXCEPT_LINES)


def safe_file_stem(name: str) -> str:
    """A file-system-safe stem for ``name``: characters outside ``[A-Za-z0-9._+-]`` become
    ``_``, a leading dot or dash becomes ``_``, and the result is at most
    :data:`FILE_STEM_MAX_LENGTH` characters. When anything had to change, eight hexadecimal
    digits of the name's SHA-256 are appended, so two different odd names do not collide.
    A valid name without spaces or parentheses is returned unchanged."""
    safe = _UNSAFE_FILE_CHARACTERS.sub("_", name)
    if safe[:1] in (".", "-"):
        safe = "_" + safe[1:]
    if safe == name and 0 < len(safe) <= FILE_STEM_MAX_LENGTH:
        return safe
    tag = hashlib.sha256(name.encode("utf-8", "surrogatepass")).hexdigest()[:8]
    return f"{safe[:FILE_STEM_MAX_LENGTH - 9]}~{tag}" if safe else f"name~{tag}"


def path_inside(folder: Path, file_name: str) -> Path:
    """``folder / file_name``, refusing a file name that is not a single plain component or
    that would resolve outside ``folder`` (through ``..``, an absolute path or a link).

    Raises
    ------
    InvalidText
        With field ``file_name``.
    """
    if (not file_name or file_name in (".", "..") or "/" in file_name or "\\" in file_name
            or "\x00" in file_name):
        raise InvalidText("file_name", f"{file_name!r} is not a plain file name")
    base = folder.resolve()
    target = (base / file_name).resolve()
    if target.parent != base:
        raise InvalidText("file_name", f"{file_name!r} would be written outside {folder}")
    return folder / file_name
