"""Reading JSON polar documents: one object, a list, and the refused shapes.

The documents are hand-made for these tests (invented, not data).
"""

from __future__ import annotations

import json

import numpy as np
import pytest

from polarsvc.formats import FormatError, parse_polar_file


def _document(**changes) -> dict:
    document = {
        "airfoil": "TEST-J",
        "family": "test",
        "conditions": {"reynolds": 6e6, "mach": 0.05, "surface": "clean", "thickness": 0.25},
        "provenance": {"source_kind": "cfd", "reference": "run 7", "facility": "solver 2.1",
                       "measured_on": "2024-11-30", "contributor": "someone", "notes": None},
        "table": {"alpha_deg": [-4.0, 0.0, 6.0], "cl": [-0.2, 0.25, 0.9],
                  "cd": [0.011, 0.008, 0.01], "cm": [-0.05, -0.06, -0.07]},
    }
    document.update(changes)
    return document


def _error(text: str) -> FormatError:
    with pytest.raises(FormatError) as info:
        parse_polar_file(text.encode())
    return info.value


def test_single_object():
    (parsed,) = parse_polar_file(json.dumps(_document()).encode(), filename="p.json")
    assert parsed.airfoil == "TEST-J"
    assert parsed.family == "test"
    assert parsed.polar.conditions() == {
        "reynolds": 6e6, "mach": 0.05, "thickness": 0.25, "surface": "clean"
    }
    assert parsed.provenance["facility"] == "solver 2.1"
    assert parsed.provenance["notes"] is None
    np.testing.assert_array_equal(parsed.polar.cm, [-0.05, -0.06, -0.07])
    assert parsed.source_line == 1


def test_list_records_the_line_of_each_object():
    text = json.dumps([_document(), _document(airfoil="TEST-K")], indent=2)
    first, second = parse_polar_file(text.encode(), content_type="application/json")
    assert (first.airfoil, second.airfoil) == ("TEST-J", "TEST-K")
    lines = text.splitlines()
    assert lines[first.source_line - 1].strip() == "{"
    assert lines[second.source_line - 1].strip() == "{"
    assert second.source_line > first.source_line


def test_alpha_rad_is_converted_and_percent_thickness_accepted():
    document = _document()
    document["table"] = {"alpha_rad": [-0.07, 0.0, 0.1], "cl": [-0.2, 0.25, 0.9],
                         "cd": [0.011, 0.008, 0.01]}
    document["conditions"] = {"thickness": "25 %"}
    (parsed,) = parse_polar_file(json.dumps(document).encode())
    # reference: numpy.degrees (general-purpose library)
    np.testing.assert_array_equal(parsed.polar.alpha_deg, np.degrees([-0.07, 0.0, 0.1]))
    assert parsed.polar.thickness == 0.25  # percent is one hundredth (ISO 80000-1, from memory)


def test_airfoil_from_defaults():
    document = _document()
    del document["airfoil"]
    (parsed,) = parse_polar_file(json.dumps(document).encode(), defaults={"airfoil": "Q"})
    assert parsed.airfoil == "Q"


@pytest.mark.parametrize(
    ("text", "line", "field"),
    [
        ('{"airfoil": "A",\n "table": {"alpha_deg": [0, 5], "cl": [NaN, 1], "cd": [1, 1]}}',
         None, None),
        ('{"airfoil": "A",\n "table": [1, 2', 2, None),
        ('[]', 1, None),
        ('[1]', 1, None),
        ('{"airfoil": "A", "colour": 1}', 1, "colour"),
        ('{"airfoil": "A", "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1], "x": []}}',
         1, "table.x"),
        ('{"airfoil": "A", "table": {"alpha_deg": [0, 5], "cd": [1, 1]}}', 1, "table.cl"),
        ('{"airfoil": "A", "table": {"cl": [0, 1], "cd": [1, 1]}}', 1, "table.alpha_deg"),
        ('{"airfoil": "A", "table": {"alpha_deg": [0, 5], "cl": [0, "1"], "cd": [1, 1]}}',
         1, "table.cl[1]"),
        ('{"airfoil": "A", "table": {"alpha_deg": [0, 5], "cl": [0, true], "cd": [1, 1]}}',
         1, "table.cl[1]"),
        ('{"airfoil": "A", "table": {"alpha_deg": [0, 5, 0], "cl": [0, 1, 2], "cd": [1, 1, 1]}}',
         1, "table.cl[2]"),
        ('{"airfoil": "A", "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1, 1]}}',
         1, "table.cd"),
        ('{"airfoil": "A", "conditions": {"surface": "wet"},\n'
         ' "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1]}}', 1, "conditions.surface"),
        ('{"airfoil": "A", "conditions": {"thickness": 21},\n'
         ' "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1]}}', 1,
         "conditions.thickness"),
        ('{"airfoil": "A", "conditions": {"reynolds": -1},\n'
         ' "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1]}}', 1,
         "conditions.reynolds"),
        ('{"airfoil": "A", "provenance": {"source_kind": "hearsay"},\n'
         ' "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1]}}', 1,
         "provenance.source_kind"),
        ('{"table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1]}}', 1, "airfoil"),
        ('[\n{"airfoil": "A", "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, 1]}},\n'
         '{"airfoil": "B", "table": {"alpha_deg": [0, 5], "cl": [0, 1], "cd": [1, -1]}}\n]',
         3, "table.cd[1]"),
    ],
)
def test_bad_json(text, line, field):
    error = _error(text)
    assert (error.line, error.field) == (line, field)
