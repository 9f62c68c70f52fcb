"""Derived tables over HTTP: full-range extension, augmentation, blends, blade sets; formats,
ETags, the cache, and agreement with the numeric core called directly."""

from __future__ import annotations

import numpy as np
import pytest

from polarsvc import aero
from polarsvc.formats import parse_polar_file
from polarsvc.formats.binary import ARROW_MEDIA_TYPE, decode_arrow, decode_npz
from tests.api.conftest import SEED_DIR


def first_revision(client, tokens, airfoil="SKUA-210", reynolds=4e6, surface="clean"):
    listing = client.get("/api/v1/polars", params={
        "airfoil": airfoil, "reynolds": reynolds, "surface": surface},
        headers=tokens.header("reader")).json()
    assert len(listing) == 1
    return listing[0]["content_hash"]


def test_extended_table_spans_the_full_range_and_keeps_measured_points(demo_client, tokens):
    key = first_revision(demo_client, tokens)
    raw = demo_client.get(f"/api/v1/polars/{key}", headers=tokens.header("reader")).json()
    response = demo_client.get(f"/api/v1/polars/{key}/extended",
                               params={"step_deg": 0.5}, headers=tokens.header("reader"))
    assert response.status_code == 200, response.text
    table = response.json()
    alpha = np.array(table["alpha_deg"])
    assert alpha[0] == -180.0 and alpha[-1] == 180.0
    # periodic at +-180 (common practice, no source)
    assert table["cl"][0] == table["cl"][-1] and table["cd"][0] == table["cd"][-1]
    # the measured angles lie on the 0.5 deg grid, so they are served unchanged
    measured = dict(zip(raw["table"]["alpha_deg"], raw["table"]["cl"], strict=True))
    served = dict(zip(table["alpha_deg"], table["cl"], strict=True))
    for angle, cl in measured.items():
        assert served[angle] == cl
    assert table["kind"] == "extended"
    assert table["inputs"][0]["revision"] == key
    assert "IEC 61400-1" in table["caution"]
    assert response.headers["etag"].startswith(f'"{table["content_hash"]}')


def test_etag_gives_304_and_formats_agree(demo_client, tokens):
    key = first_revision(demo_client, tokens)
    url = f"/api/v1/polars/{key}/extended"
    reader = tokens.header("reader")
    as_json = demo_client.get(url, headers=reader)
    etag = as_json.headers["etag"]
    assert demo_client.get(url, headers={**reader, "If-None-Match": etag}).status_code == 304
    assert demo_client.get(url, headers={**reader, "If-None-Match": f"W/{etag}, \"x\""}
                           ).status_code == 304
    assert demo_client.get(url, headers={**reader, "If-None-Match": '"other"'}
                           ).status_code == 200
    as_bin = demo_client.get(url, headers={**reader, "Accept": ARROW_MEDIA_TYPE})
    assert as_bin.headers["content-type"] == ARROW_MEDIA_TYPE
    table = decode_arrow(as_bin.content)
    document = as_json.json()
    assert table.meta["content_hash"] == document["content_hash"]
    np.testing.assert_array_equal(table.columns["cl"], document["cl"])
    as_csv = demo_client.get(url, params={"format": "csv"}, headers=reader)
    assert as_csv.headers["content-type"].startswith("text/csv")
    rows = [line for line in as_csv.text.splitlines() if line and not line.startswith("#")]
    assert rows[0] == "alpha_deg,cl,cd,cm"
    values = np.array([[float(v) for v in row.split(",")] for row in rows[1:]])
    np.testing.assert_array_equal(values[:, 1], document["cl"])


def test_second_request_is_a_cache_hit_with_the_same_hash(demo_client, tokens):
    key = first_revision(demo_client, tokens)
    url = f"/api/v1/polars/{key}/augmented"
    params = {"r_over_R": 0.3, "chord_over_r": 0.25, "model": "snel"}
    first = demo_client.get(url, params=params, headers=tokens.header("reader"))
    second = demo_client.get(url, params=params, headers=tokens.header("reader"))
    assert first.headers["x-polarsvc-cache"] == "miss"
    assert second.headers["x-polarsvc-cache"] == "hit"
    assert first.json()["content_hash"] == second.json()["content_hash"]
    assert first.json()["recipe"] == second.json()["recipe"]


def seed_members(surface: str = "clean") -> list[aero.Polar]:
    members = []
    for path in sorted((SEED_DIR / "skua").glob(f"*_{surface}.csv")):
        members.extend(p.polar for p in parse_polar_file(path.read_bytes(), filename=path.name))
    return members


def test_blade_set_matches_the_core_called_directly(demo_client, tokens):
    """The service's blade set equals polarsvc.aero.build_blade_tables on the seed files
    parsed directly (independent of the store), with station Reynolds numbers from
    polarsvc.aero.station_reynolds."""
    import json

    response = demo_client.get("/api/v1/blades/skerry-48/tables",
                               headers=tokens.header("reader"))
    assert response.status_code == 200, response.text
    served = response.json()
    blade = json.loads((SEED_DIR / "skerry-48.json").read_text())
    stations = blade["stations"]
    radius = np.array([s["radius_m"] for s in stations])
    chord = np.array([s["chord_m"] for s in stations])
    operating = blade["operating_point"]
    reynolds = aero.station_reynolds(
        radius, chord, operating["wind_speed_m_s"], operating["rotor_speed_rpm"])
    omega = 2 * np.pi * operating["rotor_speed_rpm"] / 60
    expected = aero.build_blade_tables(
        seed_members("clean"),
        aero.BladeStations(radius_m=radius, chord_m=chord,
                           twist_deg=[s["twist_deg"] for s in stations],
                           thickness=[s["thickness"] for s in stations], reynolds=reynolds),
        rotor_radius_m=blade["rotor_radius_m"],
        tip_speed_ratio=omega * blade["rotor_radius_m"] / operating["wind_speed_m_s"],
        rotation_model="snel",
        # blade sets take cd_max from the blade: AR = 46.4^2 / 101.4218 m^2 (numpy.trapezoid
        # over the seed blade's stations, run once) = 21.2278
        aspect_ratio=served["recipe"]["params"]["extension"]["aspect_ratio"],
    )
    assert served["recipe"]["params"]["extension"]["aspect_ratio"] == pytest.approx(
        21.2278, abs=1e-4)
    assert np.array(served["cl"]).shape == (len(stations), 721)
    np.testing.assert_array_equal(served["alpha_deg"], expected.alpha_deg)
    np.testing.assert_allclose(served["cl"], expected.cl, rtol=0, atol=0)
    np.testing.assert_allclose(served["cd"], expected.cd, rtol=0, atol=0)
    np.testing.assert_allclose(served["cm"], expected.cm, rtol=0, atol=0)
    np.testing.assert_allclose(served["f_separation"], expected.dynamic_stall.f_separation,
                               rtol=0, atol=0)
    np.testing.assert_allclose(served["cl_fs"], expected.dynamic_stall.cl_fs, rtol=0, atol=0)
    assert len(served["inputs"]) == 21  # 7 airfoils x 3 Reynolds numbers, clean
    assert served["draws_on_deprecated"] is False
    assert served["reports"]["stations"][0]["thickness_used"] == 1.0


def test_blend_at_a_member_thickness_and_reynolds_reproduces_the_member(demo_client, tokens):
    reader = tokens.header("reader")
    key = first_revision(demo_client, tokens, "SKUA-300", 4e6)
    member = demo_client.get(f"/api/v1/polars/{key}/extended", headers=reader).json()
    blend = demo_client.get("/api/v1/families/skua/blend",
                            params={"thickness": 0.30, "reynolds": 4e6}, headers=reader)
    assert blend.status_code == 200, blend.text
    np.testing.assert_allclose(blend.json()["cl"], member["cl"], rtol=0, atol=1e-12)


def test_blend_outside_the_family_refuses_unless_clamped(demo_client, tokens):
    reader = tokens.header("reader")
    refused = demo_client.get("/api/v1/families/skua/blend",
                              params={"thickness": 0.25, "reynolds": 2e7}, headers=reader)
    assert refused.status_code == 422
    assert "reynolds" in refused.json()["detail"]
    clamped = demo_client.get("/api/v1/families/skua/blend",
                              params={"thickness": 0.25, "reynolds": 2e7, "clamp": True},
                              headers=reader)
    assert clamped.status_code == 200
    assert clamped.json()["reports"]["section"]["reynolds_clamped"] is True


@pytest.mark.parametrize("fmt", ["json", "csv", "bin", "arrow", "npz"])
def test_blade_set_in_every_format(demo_client, tokens, fmt):
    response = demo_client.get("/api/v1/blades/skerry-48/tables", params={"format": fmt},
                               headers=tokens.header("reader"))
    assert response.status_code == 200
    if fmt in ("bin", "arrow", "npz"):
        decode = decode_npz if fmt == "npz" else decode_arrow
        table = decode(response.content)
        assert table.columns["cl"].shape == (20, 721)
        assert table.columns["f_separation"].shape == table.columns["cl_fs"].shape == (20, 721)
        assert table.meta["blade"]["name"] == "skerry-48"
        radii = [s["radius_m"] for s in table.meta["reports"]["stations"]]
        np.testing.assert_array_equal(table.radius_m, radii)
        stall = table.meta["reports"]["stations"][9]["dynamic_stall"]
        assert stall["stall_onset_deg"] > 0
    elif fmt == "csv":
        lines = [x for x in response.text.splitlines() if not x.startswith("#")]
        assert lines[0] == "radius_m,alpha_deg,cl,cd,cm,f_separation,cl_fs"
        assert len(lines) == 1 + 20 * 721
        comments = [x for x in response.text.splitlines() if x.startswith("#")]
        assert any("dynamic_stall_station_9" in x and "stall_onset_deg" in x for x in comments)
    else:
        body = response.json()
        assert np.array(body["f_separation"]).shape == (20, 721)


def test_unknown_things_answer_404_and_bad_methods_422(demo_client, tokens):
    reader = tokens.header("reader")
    assert demo_client.get("/api/v1/airfoils/NOPE", headers=reader).status_code == 404
    assert demo_client.get("/api/v1/blades/nope/tables", headers=reader).status_code == 404
    key = first_revision(demo_client, tokens)
    bad = demo_client.get(f"/api/v1/polars/{key}/extended", params={"method": "guess"},
                          headers=reader)
    assert bad.status_code == 422
    assert "viterna" in bad.json()["detail"]
    bad_format = demo_client.get(f"/api/v1/polars/{key}/extended", params={"format": "xml"},
                                 headers=reader)
    assert bad_format.status_code == 400


def test_without_pyarrow_the_binary_form_falls_back_to_npz(demo_client, tokens, monkeypatch):
    from polarsvc.api import responses
    from polarsvc.client import _table_from_binary
    from polarsvc.formats.binary import NPZ_MEDIA_TYPE

    monkeypatch.setattr(responses, "ARROW_AVAILABLE", False)
    reader = tokens.header("reader")
    url = "/api/v1/blades/skerry-48/tables"
    as_bin = demo_client.get(url, params={"format": "bin"}, headers=reader)
    assert as_bin.headers["content-type"] == NPZ_MEDIA_TYPE
    by_accept = demo_client.get(url, headers={**reader, "Accept": ARROW_MEDIA_TYPE})
    assert by_accept.headers["content-type"] == NPZ_MEDIA_TYPE
    refused = demo_client.get(url, params={"format": "arrow"}, headers=reader)
    assert refused.status_code == 400 and "pyarrow" in refused.json()["detail"]
    table = _table_from_binary(as_bin.content, NPZ_MEDIA_TYPE)
    document = demo_client.get(url, headers=reader).json()
    np.testing.assert_array_equal(table.cl, document["cl"])
    assert table.content_hash == document["content_hash"]


def test_csv_body_is_cached_and_identical_on_a_hit(demo_client, tokens):
    from polarsvc.api import responses

    reader = tokens.header("reader")
    url = "/api/v1/blades/skerry-48/tables"
    first = demo_client.get(url, params={"format": "csv"}, headers=reader)
    keys = [key for key in responses.ENCODED._items if key[1] == "csv"]
    assert keys, "the CSV rows were not cached"
    second = demo_client.get(url, params={"format": "csv"}, headers=reader)
    assert second.content == first.content
    document = demo_client.get(url, headers=reader).json()
    # reference reader: numpy.loadtxt
    lines = [x for x in first.text.splitlines() if not x.startswith("#")][1:]
    values = np.loadtxt(lines, delimiter=",")
    assert values[:, 2].tobytes() == np.asarray(document["cl"]).ravel().tobytes()
