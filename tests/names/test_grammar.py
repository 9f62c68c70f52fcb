"""The name grammar and the safe file names (polarsvc.names).

The rules checked here are common practice for identifiers that become URL path segments
and file names (no source): no path separator, no control character, a length bound, no
leading dot (hidden files, ``.`` and ``..``) and no leading dash (read as an option)."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from polarsvc.names import (
    FILE_STEM_MAX_LENGTH,
    NAME_MAX_LENGTH,
    InvalidText,
    check_name,
    check_text,
    path_inside,
    safe_file_stem,
)


@pytest.mark.parametrize(
    "name", ["SKUA-210", "skua", "skerry-48", "SKUA 210 (tripped)", "a", "v1.2+b_c",
             "x" * NAME_MAX_LENGTH, "9"]
)
def test_valid_names(name):
    assert check_name("name", name) == name


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("", "empty"),
        ("../../escaped", "'.' "),  # starts with a dot
        ("/tmp/absolute", "'/'"),
        ("dir/sub", "'/'"),
        ("dir\\sub", "'\\\\'"),
        ("a\x00b", "U+0000"),
        ("a\tb", "U+0009"),
        ("a\nb", "U+000A"),
        ("a\x85b", "U+0085"),
        (" lead", "start with a letter or digit"),
        ("trail ", "not end with a space"),
        (".hidden", "start with a letter or digit"),
        ("-rf", "start with a letter or digit"),
        ("x" * (NAME_MAX_LENGTH + 1), f"at most {NAME_MAX_LENGTH}"),
        ("Skærgård", "'æ'"),
        ("a<b>", "'<'"),
        ("a:b", "':'"),
        (21, "must be text"),
    ],
)
def test_invalid_names_are_refused_naming_the_field(name, expected):
    with pytest.raises(InvalidText) as raised:
        check_name("airfoil", name)
    assert raised.value.field == "airfoil"
    if expected == "'.' ":
        assert "start with a letter or digit" in str(raised.value) or "'/'" in str(raised.value)
    else:
        assert expected in str(raised.value)


def test_free_text_keeps_lines_and_tabs_but_no_other_control_characters():
    assert check_text("notes", "run 31\ttripped\r\nsecond line") == "run 31\ttripped\r\nsecond line"
    for bad, code in (("a\x00", "U+0000"), ("\x1b[31m", "U+001B"), ("a\x7f", "U+007F")):
        with pytest.raises(InvalidText, match=re.escape(code)) as raised:
            check_text("notes", bad)
        assert raised.value.field == "notes"


def test_safe_file_stem_keeps_plain_names_and_tags_changed_ones():
    assert safe_file_stem("SKUA-210") == "SKUA-210"
    changed = safe_file_stem("../../escaped")
    assert changed.startswith("_._.._escaped~") and len(changed) == len("_._.._escaped~") + 8
    assert safe_file_stem("dir/sub") != safe_file_stem("dir_sub")  # no collision
    assert safe_file_stem("dir_sub") == "dir_sub"


@given(st.text(min_size=1, max_size=300))
def test_any_name_gives_a_plain_stem_inside_the_folder(name):
    stem = safe_file_stem(name)
    assert 0 < len(stem) <= FILE_STEM_MAX_LENGTH
    assert stem[0] not in ".-" and "/" not in stem and "\\" not in stem
    assert all(c.isascii() and (c.isalnum() or c in "._+-~") for c in stem)
    folder = Path("/srv/exports")
    assert path_inside(folder, stem + "_0123456789ab.csv").parent == folder


@pytest.mark.parametrize("file_name", ["..", "../x.csv", "/etc/passwd", "a/b.csv", "", "."])
def test_path_inside_refuses_anything_but_one_plain_component(tmp_path, file_name):
    with pytest.raises(InvalidText):
        path_inside(tmp_path, file_name)


def test_path_inside_refuses_a_link_leading_out(tmp_path):
    (tmp_path / "dest").mkdir()
    (tmp_path / "dest" / "link.csv").symlink_to(tmp_path / "outside.csv")
    with pytest.raises(InvalidText, match="outside"):
        path_inside(tmp_path / "dest", "link.csv")
