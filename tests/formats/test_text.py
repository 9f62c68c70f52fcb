"""Reading text tables: layouts, header detection, metadata, units."""

from __future__ import annotations

import numpy as np
import pytest

from polarsvc.formats import FormatError, parse_polar_file

ROWS = [(-4.0, -0.2, 0.011, -0.05), (0.0, 0.25, 0.008, -0.06), (6.0, 0.9, 0.01, -0.07)]
# A hand-made three-row table (invented for these tests, not data).


def _table(delimiter: str, header: str | None = "alpha_deg,cl,cd,cm", meta: str = "") -> bytes:
    lines = ["# airfoil: TEST-1", meta] if meta else ["# airfoil: TEST-1"]
    if header is not None:
        lines.append(header.replace(",", delimiter))
    lines += [delimiter.join(repr(v) for v in row) for row in ROWS]
    return ("\n".join(lines) + "\n").encode()


def _expected_columns() -> tuple[np.ndarray, ...]:
    return tuple(np.array(column) for column in zip(*ROWS, strict=True))


@pytest.mark.parametrize("delimiter", [",", "\t", " ", "   "])
def test_layouts_are_detected(delimiter):
    (parsed,) = parse_polar_file(_table(delimiter))
    alpha, cl, cd, cm = _expected_columns()
    np.testing.assert_array_equal(parsed.polar.alpha_deg, alpha)
    np.testing.assert_array_equal(parsed.polar.cl, cl)
    np.testing.assert_array_equal(parsed.polar.cd, cd)
    np.testing.assert_array_equal(parsed.polar.cm, cm)
    assert parsed.airfoil == "TEST-1"


@pytest.mark.parametrize(
    ("layout", "delimiter"), [("csv", ","), ("tsv", "\t"), ("whitespace", " ")]
)
def test_layout_can_be_stated(layout, delimiter):
    (parsed,) = parse_polar_file(_table(delimiter), layout=layout)
    assert parsed.polar.size == 3


def test_tsv_content_type_states_the_layout():
    (parsed,) = parse_polar_file(_table("\t"), content_type="text/tab-separated-values")
    assert parsed.polar.size == 3


def test_header_is_detected_and_first_data_line_recorded():
    data = b"# airfoil: A\n\n# free comment\nalpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.012\n"
    (parsed,) = parse_polar_file(data)
    assert parsed.source_line == 5
    assert not parsed.polar.has_cm


def test_header_synonyms_and_case():
    data = b"# airfoil: A\nAoA_deg,CL,Drag_Coefficient\n0,0.1,0.01\n5,0.6,0.012\n"
    (parsed,) = parse_polar_file(data)
    np.testing.assert_array_equal(parsed.polar.alpha_deg, [0.0, 5.0])


def test_quoted_csv_header():
    data = b'# airfoil: A\n"alpha_deg","cl","cd"\n0,0.1,0.01\n5,0.6,0.012\n'
    (parsed,) = parse_polar_file(data)
    assert parsed.polar.size == 2


def test_no_header_with_stated_unit_uses_column_order():
    data = b"# airfoil: A\n# angle_unit: deg\n-4 -0.2 0.011\n6 0.9 0.01\n"
    (parsed,) = parse_polar_file(data)
    np.testing.assert_array_equal(parsed.polar.cl, [-0.2, 0.9])


def test_no_header_with_unit_from_caller():
    data = b"-4,-0.2,0.011,-0.05\n6,0.9,0.01,-0.07\n"
    (parsed,) = parse_polar_file(data, angle_unit="deg", defaults={"airfoil": "A"})
    np.testing.assert_array_equal(parsed.polar.cm, [-0.05, -0.07])


def test_bare_alpha_with_angle_unit_deg():
    data = b"# airfoil: A\n# angle_unit: deg\nalpha,cl,cd\n-4,-0.2,0.011\n6,0.9,0.01\n"
    (parsed,) = parse_polar_file(data)
    np.testing.assert_array_equal(parsed.polar.alpha_deg, [-4.0, 6.0])


@pytest.mark.parametrize(
    "source",
    [
        "alpha_rad,cl,cd\n{a},-0.2,0.011\n{b},0.9,0.01\n",
        "# angle_unit: rad\nalpha,cl,cd\n{a},-0.2,0.011\n{b},0.9,0.01\n",
        "# angle_unit: rad\n{a},-0.2,0.011\n{b},0.9,0.01\n",
    ],
)
def test_radians_are_converted(source):
    angles_rad = [-0.0698, 0.1745]
    text = "# airfoil: A\n" + source.format(a=angles_rad[0], b=angles_rad[1])
    (parsed,) = parse_polar_file(text.encode())
    # reference: numpy.degrees (general-purpose library)
    np.testing.assert_array_equal(parsed.polar.alpha_deg, np.degrees(angles_rad))


@pytest.mark.parametrize(
    ("written", "fraction"),
    # percent is one hundredth (ISO 80000-1, from memory)
    [("0.21", 0.21), ("21 %", 0.21), ("21%", 0.21), ("40.5 %", 0.405), ("1", 1.0)],
)
def test_thickness_fraction_and_percent(written, fraction):
    data = f"# airfoil: A\n# thickness: {written}\nalpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.01\n"
    (parsed,) = parse_polar_file(data.encode())
    assert parsed.polar.thickness == fraction


def test_metadata_and_provenance_are_read():
    data = (
        b"# airfoil: A\n# family: fam\n# reynolds: 3e6\n# mach: 0.1\n# surface: rough\n"
        b"# source_kind: wind-tunnel\n# reference: run 12\n# facility: tunnel 2\n"
        b"# measured_on: 2025-04-03\n# contributor: someone\n# notes: tripped at 5 %\n"
        b"alpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.01\n"
    )
    (parsed,) = parse_polar_file(data)
    assert parsed.family == "fam"
    assert parsed.polar.conditions() == {
        "reynolds": 3e6, "mach": 0.1, "thickness": None, "surface": "rough"
    }
    assert parsed.provenance == {
        "source_kind": "wind-tunnel", "reference": "run 12", "facility": "tunnel 2",
        "measured_on": "2025-04-03", "contributor": "someone", "notes": "tripped at 5 %",
    }


def test_defaults_fill_missing_metadata_and_the_file_wins():
    data = b"# reynolds: 3e6\nalpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.01\n"
    (parsed,) = parse_polar_file(
        data, defaults={"airfoil": "FROM-QUERY", "reynolds": 9e6, "surface": "tripped"}
    )
    assert parsed.airfoil == "FROM-QUERY"
    assert parsed.polar.reynolds == 3e6
    assert parsed.polar.surface == "tripped"


def test_unsorted_rows_are_sorted_and_byte_order_mark_accepted():
    data = "\ufeff# airfoil: A\nalpha_deg,cl,cd\n5,0.6,0.01\n0,0.1,0.009\n".encode()
    (parsed,) = parse_polar_file(data)
    np.testing.assert_array_equal(parsed.polar.alpha_deg, [0.0, 5.0])


def test_unknown_default_key_is_refused():
    with pytest.raises(FormatError) as info:
        parse_polar_file(b"alpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.01\n", defaults={"colour": "x"})
    assert (info.value.line, info.value.field) == (None, "colour")


def test_windows_line_endings_keep_line_numbers():
    data = b"# airfoil: A\r\nalpha_deg,cl,cd\r\n0,0.1,0.01\r\n5,x,0.01\r\n"
    with pytest.raises(FormatError) as info:
        parse_polar_file(data)
    assert (info.value.line, info.value.field) == (4, "cl")
    (parsed,) = parse_polar_file(data.replace(b"x", b"0.6"))
    assert parsed.source_line == 3


# -- header spellings and delimiter sniffing ------------------------------------------------
@pytest.mark.parametrize(
    ("header", "unit"),
    [
        ("alpha,cl,cd", None), ("aoa,c_l,c_d", None), ("angle,lift,drag", None),
        ("Angle of attack,Lift coefficient,Drag coefficient", None),
        ("alpha_deg,cl,cd", "deg"), ("Alpha (deg),CL (-),CD (-)", "deg"),
        ("aoa[deg],c_l,c_d", "deg"), ("incidence deg,cl,cd", "deg"),
        ("alpha (rad),cl,cd", "rad"),
    ],
)
def test_common_header_spellings(header, unit):
    angle = "0.0872664626" if unit == "rad" else "5"  # 5 deg in radians (by hand)
    data = f"# airfoil: A\n{header}\n0,0.1,0.01\n{angle},0.6,0.012\n".encode()
    (parsed,) = parse_polar_file(data)
    np.testing.assert_allclose(parsed.polar.alpha_deg, [0.0, 5.0], rtol=0, atol=1e-8)
    np.testing.assert_array_equal(parsed.polar.cl, [0.1, 0.6])
    # a name without unit is taken as degrees and says so
    assert parsed.angle_unit_assumed is (unit is None)


def test_moment_spellings():
    data = b"# airfoil: A\nalpha_deg,cl,cd,c_m\n0,0.1,0.01,-0.05\n5,0.6,0.012,-0.06\n"
    (parsed,) = parse_polar_file(data)
    np.testing.assert_array_equal(parsed.polar.cm, [-0.05, -0.06])


@pytest.mark.parametrize("content_type", ["text/csv", "text/tab-separated-values",
                                          "text/plain", None])
def test_delimiter_is_sniffed_whatever_the_declared_text_type(content_type):
    whitespace = b"# airfoil: A\nalpha_deg cl cd cm\n0 0.1 0.01 -0.05\n5 0.6 0.012 -0.06\n"
    (parsed,) = parse_polar_file(whitespace, content_type=content_type, filename="x.csv")
    np.testing.assert_array_equal(parsed.polar.alpha_deg, [0.0, 5.0])
    tabbed = b"# airfoil: A\nalpha_deg\tcl\tcd\n0\t0.1\t0.01\n5\t0.6\t0.012\n"
    (parsed,) = parse_polar_file(tabbed, content_type=content_type, filename="x.csv")
    np.testing.assert_array_equal(parsed.polar.cl, [0.1, 0.6])
