"""HTTP conformance: a 405 answer lists every allowed method (RFC 9110, section 15.5.6:
"The origin server MUST generate an Allow header field"), time filters take ISO 8601
date-times only (RFC 3339), and enumerated query parameters declare their values in the
OpenAPI document (OpenAPI 3.1, Schema Object ``enum``)."""

from __future__ import annotations

import pytest

from polarsvc.aero.extension import EXTENSION_METHODS
from polarsvc.aero.interpolation import THICKNESS_METHODS
from polarsvc.aero.polar import SURFACE_CONDITIONS
from polarsvc.aero.rotation import ROTATION_MODELS
from polarsvc.api.app import create_app
from polarsvc.api.settings import Settings


@pytest.mark.parametrize(
    ("method", "path", "expected"),
    [
        ("DELETE", "/api/v1/polars", {"GET", "POST"}),
        ("PUT", "/api/v1/tokens", {"GET", "POST"}),
        ("PATCH", "/api/v1/blades", {"GET", "POST"}),
        ("GET", "/api/v1/tokens/someone", {"DELETE"}),
    ],
)
def test_405_lists_every_allowed_method(client, tokens, method, path, expected):
    answer = client.request(method, path, headers=tokens.header("admin"))
    assert answer.status_code == 405
    allowed = {part.strip() for part in answer.headers["allow"].split(",")}
    assert allowed == expected


@pytest.mark.parametrize("value", ["0.5", "1700000000", "2026-01-01", "2026-01-01T00:00:00",
                                   "yesterday"])
@pytest.mark.parametrize("parameter", ["since", "until"])
def test_audit_times_must_be_iso_8601_with_a_zone(client, tokens, parameter, value):
    answer = client.get("/api/v1/audit", params={parameter: value},
                             headers=tokens.header("reader"))
    assert answer.status_code == 422, answer.text
    assert answer.json()["parameter"] == parameter


@pytest.mark.parametrize("value", ["2026-01-01T00:00:00Z", "2026-01-01t00:00:00z",
                                   "2026-01-01T01:00:00.5+01:00", "2016-12-31T23:59:60Z",
                                   "0001-01-01T00:00:00+14:00", "9999-12-31T23:59:59-12:00"])
def test_audit_times_in_every_rfc_3339_form_are_accepted(client, tokens, value):
    answer = client.get("/api/v1/audit", params={"until": value, "since": value},
                             headers=tokens.header("reader"))
    assert answer.status_code == 200, answer.text


def test_audit_until_bounds_the_events(client, tokens):
    reader = tokens.header("admin")  # the only events here are token events, shown to admins
    early = client.get("/api/v1/audit", params={"until": "2000-01-01T00:00:00Z"},
                            headers=reader)
    late = client.get("/api/v1/audit", params={"until": "2999-01-01T00:00:00+02:00"},
                           headers=reader)
    assert early.json() == [] and len(late.json()) > 0


ENUMERATED = {
    "method": set(EXTENSION_METHODS),
    "model": set(ROTATION_MODELS),
    "rotation_model": {*ROTATION_MODELS, "none"},
    "format": {"json", "csv", "bin", "arrow", "npz"},
    "rotation_order": {"extend-then-augment", "augment-then-extend"},
    "trailing_edge_drag": {"reverse-flow", "mirror"},
    "surface": set(SURFACE_CONDITIONS),
    "thickness_method": set(THICKNESS_METHODS),
    "review_state": {"draft", "approved", "deprecated"},
    "source_kind": {"wind-tunnel", "cfd", "panel-method", "synthetic", "other"},
}


def _enum(schema: dict) -> set[str] | None:
    if "enum" in schema:
        return set(schema["enum"])
    for option in schema.get("anyOf", []):
        if "enum" in option:
            return set(option["enum"])
        if "const" in option:
            return {option["const"]}
    return None


def test_enumerated_parameters_declare_their_values():
    document = create_app(Settings(database_url="sqlite://")).openapi()
    seen = set()
    for path, operations in document["paths"].items():
        for verb, operation in operations.items():
            for parameter in operation.get("parameters", []):
                name = parameter["name"]
                if name not in ENUMERATED:
                    continue
                values = _enum(parameter["schema"])
                where = f"{verb.upper()} {path} {name}"
                assert values is not None, f"{where}: no enum"
                if name == "format" and path.endswith("/lineage"):
                    assert values == {"json", "text"}, where
                elif name == "format" and path.endswith("/blades/{key}/tables"):
                    assert values == {*ENUMERATED["format"], "zip"}, where
                else:
                    assert values == ENUMERATED[name], where
                seen.add(name)
    assert seen == set(ENUMERATED)


def test_an_unknown_enumerated_value_names_the_parameter(client, tokens):
    answer = client.get("/api/v1/blades/skerry-48/tables",
                             params={"rotation_model": "guess"},
                             headers=tokens.header("reader"))
    assert answer.status_code == 422
    assert answer.json()["detail"][0]["loc"] == ["query", "rotation_model"]
