"""Every refused input raises FormatError naming the file line (1-based) and the field.

The tables are hand-made for these tests (invented, not data); the expected line and field
follow from the file layout documented in polarsvc.formats.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from polarsvc.formats import FormatError, parse_polar_file

GOOD_HEAD = "# airfoil: A\nalpha_deg,cl,cd\n"


def _error(data: bytes, **kwargs) -> FormatError:
    with pytest.raises(FormatError) as info:
        parse_polar_file(data, **kwargs)
    assert isinstance(info.value, ValueError)
    return info.value


def _where(error: FormatError) -> tuple[int | None, str | None]:
    return error.line, error.field


@pytest.mark.parametrize(
    ("name", "text", "line", "field"),
    [
        ("nan", GOOD_HEAD + "0,0.1,0.01\n5,NaN,0.01\n", 4, "cl"),
        ("inf", GOOD_HEAD + "0,0.1,-inf\n5,0.5,0.01\n", 3, "cd"),
        ("overflow", GOOD_HEAD + "0,0.1,0.01\n5,1e999,0.01\n", 4, "cl"),
        ("non-numeric", GOOD_HEAD + "0,0.1,0.01\n5,0.5,abc\n", 4, "cd"),
        ("decimal comma in a cell", "# airfoil: A\nalpha_deg\tcl\tcd\n0\t0,1\t0.01\n", 3, "cl"),
        ("underscore digits", GOOD_HEAD + "0,0.1,0.01\n5,1_0,0.01\n", 4, "cl"),
        ("non-numeric angle", GOOD_HEAD + "0,0.1,0.01\nfive,0.5,0.01\n", 4, "alpha_deg"),
        ("ragged short", GOOD_HEAD + "0,0.1,0.01\n5,0.5\n", 4, None),
        ("ragged long", GOOD_HEAD + "0,0.1,0.01,7\n5,0.5,0.01\n", 3, None),
        ("duplicate angle", GOOD_HEAD + "0,0.1,0.01\n5,0.5,0.01\n0,0.2,0.01\n", 5, "cl"),
        ("cd not positive", GOOD_HEAD + "0,0.1,0.01\n5,0.5,0\n", 4, "cd"),
        ("angle beyond 180", GOOD_HEAD + "0,0.1,0.01\n185,0.5,0.01\n", 4, "alpha_deg"),
        ("radians-looking angles", GOOD_HEAD + "-0.2,0.1,0.01\n0.1,0.2,0.01\n1.3,0.5,0.01\n",
         None, "alpha_deg"),
        ("missing cd", "# airfoil: A\nalpha_deg,cl\n0,0.1\n5,0.5\n", 2, "cd"),
        ("missing angle", "# airfoil: A\ncl,cd\n0.1,0.01\n0.5,0.01\n", 2, "alpha_deg"),
        ("unknown column", "# airfoil: A\nalpha_deg,cl,cd,cn\n0,0.1,0.01,1\n", 2, "cn"),
        ("repeated column", "# airfoil: A\nalpha_deg,cl,cd,cl\n0,0.1,0.01,1\n", 2, "cl"),
        ("two angle columns", "# airfoil: A\nalpha_deg,aoa_rad,cl,cd\n0,0,0.1,0.01\n", 2,
         "aoa_rad"),
        ("no header, no unit", "# airfoil: A\n0,0.1,0.01\n5,0.5,0.01\n", 2, "alpha_deg"),
        ("no header, 2 columns", "# angle_unit: deg\n# airfoil: A\n0,0.1\n5,0.5\n", 3, None),
        ("unit contradicts column", "# airfoil: A\n# angle_unit: rad\nalpha_deg,cl,cd\n0,1,1\n",
         3, "angle_unit"),
        ("unknown surface", "# airfoil: A\n# surface: sandy\nalpha_deg,cl,cd\n0,1,1\n", 2,
         "surface"),
        ("unknown source kind", "# source_kind: guess\n# airfoil: A\nalpha_deg,cl,cd\n0,1,1\n",
         1, "source_kind"),
        ("ambiguous thickness", "# airfoil: A\n\n# thickness: 21\nalpha_deg,cl,cd\n0,1,1\n", 3,
         "thickness"),
        ("thickness 0", "# airfoil: A\n# thickness: 0 %\nalpha_deg,cl,cd\n0,1,1\n5,1,1\n", 2,
         "thickness"),
        ("negative reynolds", "# airfoil: A\n# reynolds: -3e6\nalpha_deg,cl,cd\n0,1,1\n5,1,1\n",
         2, "reynolds"),
        ("mach above 1", "# mach: 1.5\n# airfoil: A\nalpha_deg,cl,cd\n0,1,1\n5,1,1\n", 1, "mach"),
        ("bad date", "# airfoil: A\n# measured_on: 3/4/25\nalpha_deg,cl,cd\n0,1,1\n", 2,
         "measured_on"),
        ("unknown key", "# airfoil: A\n# reynold: 3e6\nalpha_deg,cl,cd\n0,1,1\n", 2, "reynold"),
        ("key given twice", "# airfoil: A\n# airfoil: B\nalpha_deg,cl,cd\n0,1,1\n", 2,
         "airfoil"),
        ("empty value", "# airfoil:\nalpha_deg,cl,cd\n0,1,1\n", 1, "airfoil"),
        ("missing airfoil", "alpha_deg,cl,cd\n0,0.1,0.01\n5,0.5,0.01\n", None, "airfoil"),
        ("single row", GOOD_HEAD + "0,0.1,0.01\n", None, "alpha_deg"),
        ("header without rows", GOOD_HEAD, 2, None),
        ("comments only", "# airfoil: A\n# just a note\n", None, None),
    ],
)
def test_bad_text_input(name, text, line, field):
    error = _error(text.encode())
    assert _where(error) == (line, field), name
    if line is not None:
        assert f"line {line}" in str(error)
    if field is not None:
        assert f"'{field}'" in str(error)


def test_empty_file():
    assert _where(_error(b"")) == (None, None)
    assert _where(_error(b"  \n\n\t\n")) == (None, None)


def test_binary_file_with_nul_bytes():
    error = _error(b"# airfoil: A\nalpha_deg,cl,cd\n\x00\x01\x02")
    assert _where(error) == (3, None)
    assert "binary" in str(error)


def test_undecodable_utf8():
    error = _error(b"# airfoil: A\nalpha_deg,cl,cd\n0,0.1,0.01\n5,0.5\xff,0.01\n")
    assert _where(error) == (4, None)
    assert "UTF-8" in str(error)


def test_too_large():
    data = (GOOD_HEAD + "0,0.1,0.01\n5,0.5,0.01\n").encode()
    error = _error(data, max_bytes=len(data) - 1)
    assert _where(error) == (None, None)
    assert "limit" in str(error)


@pytest.mark.parametrize("content_type", ["image/png", "application/pdf", "text/html"])
def test_wrong_content_type(content_type):
    error = _error(b"\x89PNG\r\n", content_type=content_type)
    assert _where(error) == (None, "content_type")


def test_unknown_layout_parameter():
    assert _where(_error(b"1,2,3\n", layout="xlsx")) == (None, "layout")


def test_unknown_angle_unit_parameter():
    assert _where(_error(b"1,2,3\n", angle_unit="grad")) == (None, "angle_unit")


def test_messages_do_not_echo_long_input_or_non_finite_literals():
    long_cell = "x" * 5000
    error = _error((GOOD_HEAD + f"0,0.1,0.01\n5,{long_cell},0.01\n").encode())
    assert len(str(error)) < 200
    error = _error((f"# airfoil: A\nalpha_deg,cl,cd,{long_cell}\n0,1,1,1\n").encode())
    assert error.field is not None and len(error.field) < 50 and len(str(error)) < 600
    error = _error((GOOD_HEAD + "0,0.1,0.01\n5,nan,0.01\n").encode())
    assert "nan" not in str(error).lower()


def test_csv_cell_beyond_the_csv_module_limit():
    cell = "1" * 200_000  # longer than the csv module's default field limit (131072)
    error = _error((GOOD_HEAD + f"0,0.1,0.01\n5,{cell},0.01\n").encode())
    assert _where(error) == (4, None)


def test_json_nested_too_deeply():
    assert _where(_error(b"[" * 100_000 + b"]" * 100_000)) == (None, None)


_PIECES = st.sampled_from(
    ["# airfoil: A\n", "# thickness: 21 %\n", "# angle_unit: rad\n", "alpha_deg,cl,cd\n",
     "alpha\tcl\tcd\tcm\n", "0,0.1,0.01\n", "5 0.5 0.01\n", "1e999,", "nan", "\"", "{", "[",
     "]", "}", ",", "\n", "\t", "-", "\r\n", '{"airfoil": "A", "table": {"alpha_deg": [0, 5], ']
)


@settings(max_examples=60, deadline=None)
@given(st.one_of(st.binary(max_size=200), st.lists(_PIECES, max_size=20).map("".join)))
def test_any_input_gives_polars_or_a_format_error(data):
    # invariant of the reader: every failure is a FormatError (common practice, no source)
    raw = data if isinstance(data, bytes) else data.encode()
    try:
        result = parse_polar_file(raw)
    except FormatError:
        return
    assert all(parsed.polar.size >= 2 for parsed in result)
