"""Outputs that say what they hold: a blend states family, thickness, Reynolds number, surface
and settings; a blade set states the operating point and, per station, radius, chord, twist,
t/c and Reynolds number; the station package (one file per station plus a manifest) turns
into a solver-style input deck in a few lines of plain Python."""

from __future__ import annotations

import hashlib
import io
import json
import math
import zipfile

import numpy as np
import pytest

from polarsvc import aero
from polarsvc.client import PolarClient
from polarsvc.package import PackageError, read_station_package
from tests.api.conftest import SEED_DIR

BLEND = "/api/v1/families/skua/blend"
BLADE = "/api/v1/blades/skerry-48"
DEFINITION = json.loads((SEED_DIR / "skerry-48.json").read_text())


def comments(text: str) -> dict[str, str]:
    pairs = (line[2:].split(": ", 1) for line in text.splitlines() if line.startswith("# "))
    return dict(pairs)


def data_rows(text: str) -> list[list[str]]:
    return [line.split(",") for line in text.splitlines() if not line.startswith("#")]


def test_blend_csv_and_json_state_section_and_settings(demo_client, tokens):
    reader = tokens.header("reader")
    params = {"thickness": 0.27, "reynolds": 5e6, "format": "csv"}
    text = demo_client.get(BLEND, params=params, headers=reader).text
    header = comments(text)
    assert header["family"] == "skua"
    assert header["thickness"] == "0.27" and header["reynolds"] == "5000000.0"
    assert header["surface"] == "clean"
    assert header["settings_thickness_method"] == "linear"
    assert header["settings_clamp"] == "false"
    assert header["settings_extension_method"] == "viterna"
    assert header["settings_step_deg"] == "0.5"
    assert "IEC 61400-1" in header["caution"]
    document = demo_client.get(BLEND, params={**params, "format": "json"}, headers=reader).json()
    described = document["describes"]
    assert (described["family"], described["thickness"], described["reynolds"],
            described["surface"]) == ("skua", 0.27, 5e6, "clean")
    assert described["settings"]["extension"]["method"] == "viterna"
    # the CSV stays exact: every cell reads back to the JSON float (repr round trip)
    rows = data_rows(text)
    assert rows[0] == ["alpha_deg", "cl", "cd", "cm"]
    assert [float(r[1]) for r in rows[1:]] == document["cl"]
    assert [float(r[2]) for r in rows[1:]] == document["cd"]


def station_reynolds_by_hand(radius_m: float, chord_m: float) -> float:
    """Re = rho W c / mu, W = sqrt(U^2 + (Omega r)^2), no induction (common practice, no
    source), ISA sea level rho = 1.225 kg/m^3, mu = 1.789e-5 Pa s (ISO 2533, from memory);
    operating point of the demo blade file: U = 10 m/s, 13 rpm."""
    omega = 2.0 * math.pi * 13.0 / 60.0
    return 1.225 * math.hypot(10.0, omega * radius_m) * chord_m / 1.789e-5


def test_station_reynolds_by_hand_matches_a_worked_value():
    # r = 7.6 m, c = 3.841 m: Omega = 1.361357 rad/s, Omega r = 10.346312 m/s,
    # W = sqrt(100 + 107.046168) = 14.389099 m/s, Re = 1.225 * 14.389099 * 3.841 / 1.789e-5
    # = 3.78446e6 (worked by hand, six digits)
    assert station_reynolds_by_hand(7.6, 3.841) == pytest.approx(3.78446e6, rel=2e-6)


def test_blade_set_states_operating_point_and_every_station(demo_client, tokens):
    reader = tokens.header("reader")
    text = demo_client.get(f"{BLADE}/tables", params={"format": "csv"}, headers=reader).text
    header = comments(text)
    assert header["blade_name"] == "skerry-48"
    assert header["operating_point_wind_speed_m_s"] == "10.0"
    assert header["operating_point_rotor_speed_rpm"] == "13.0"
    assert "no induction" in header["operating_point_reynolds_definition"]
    assert header["station_columns"] == "index,radius_m,chord_m,twist_deg,thickness,reynolds"
    for index, station in enumerate(DEFINITION["stations"]):
        values = [float(v) for v in header[f"station_{index}"].split(",")]
        assert values[:5] == [index, station["radius_m"], station["chord_m"],
                              station["twist_deg"], station["thickness"]]
        expected = station_reynolds_by_hand(station["radius_m"], station["chord_m"])
        assert values[5] == pytest.approx(expected, rel=1e-12)
    document = demo_client.get(f"{BLADE}/tables", headers=reader).json()
    described = document["describes"]
    assert described["operating_point"]["wind_speed_m_s"] == 10.0
    assert described["operating_point"]["rotor_speed_rpm"] == 13.0
    assert [s["chord_m"] for s in described["stations"]] == [
        s["chord_m"] for s in DEFINITION["stations"]]
    # another operating point changes the stated Reynolds numbers and says so
    faster = demo_client.get(f"{BLADE}/tables", params={"rotor_speed_rpm": 15.0},
                             headers=reader).json()["describes"]
    assert faster["operating_point"]["rotor_speed_rpm"] == 15.0
    assert faster["stations"][10]["reynolds"] > described["stations"][10]["reynolds"]


def solver_deck(package: bytes) -> str:
    """What a user writes to turn a station package into a solver's input: zipfile, json
    and float() only (the deck layout here is made up for the test)."""
    with zipfile.ZipFile(io.BytesIO(package)) as archive:
        manifest = json.loads(archive.read("manifest.json"))
        deck = [f"STATIONS {len(manifest['stations'])}"]
        for station in manifest["stations"]:
            rows = [line.split(",") for line in archive.read(station["file"]).decode()
                    .splitlines() if not line.startswith("#")][1:]
            deck.append(f"STATION {station['radius_m']} {station['chord_m']} "
                        f"{station['twist_deg']} {station['thickness']} {station['reynolds']}")
            deck.append(f"ROWS {len(rows)}")
            deck.extend(" ".join(f"{float(cell):.6e}" for cell in row[:4]) for row in rows)
    return "\n".join(deck) + "\n"


def test_station_package_holds_one_file_per_station_and_a_manifest(demo_client, tokens):
    reader = tokens.header("reader")
    answer = demo_client.get(f"{BLADE}/tables", params={"format": "zip"}, headers=reader)
    assert answer.status_code == 200, answer.text
    assert answer.headers["content-type"] == "application/zip"
    assert "skerry-48" in answer.headers["content-disposition"]
    package = answer.content
    served = demo_client.get(f"{BLADE}/tables", headers=reader).json()
    with zipfile.ZipFile(io.BytesIO(package)) as archive:
        manifest = json.loads(archive.read("manifest.json"))
        names = archive.namelist()
        assert "README.txt" in names and "IEC 61400-1" in archive.read("README.txt").decode()
        for station in manifest["stations"]:
            data = archive.read(station["file"])
            assert hashlib.sha256(data).hexdigest() == station["sha256"]
    assert len(manifest["stations"]) == len(DEFINITION["stations"]) == 20
    assert len([n for n in names if n.startswith("stations/")]) == 20
    assert manifest["content_hash"] == served["content_hash"]
    assert manifest["recipe_hash"] == served["recipe_hash"]
    assert manifest["recipe"] == served["recipe"]
    assert "IEC 61400-1" in manifest["caution"]
    assert manifest["blade"]["rotor_radius_m"] == DEFINITION["rotor_radius_m"]
    assert manifest["operating_point"]["wind_speed_m_s"] == 10.0
    assert [s["twist_deg"] for s in manifest["stations"]] == [
        s["twist_deg"] for s in DEFINITION["stations"]]
    assert all("dynamic_stall" in s for s in manifest["stations"])

    deck = solver_deck(package).splitlines()
    assert deck[0] == "STATIONS 20"
    assert deck[1].startswith("STATION 1.6 3.5 14.0 1.0 ")
    assert deck[2] == "ROWS 721"
    first_row = [float(v) for v in deck[3].split()]
    assert first_row == pytest.approx(
        [-180.0, served["cl"][0][0], served["cd"][0][0], served["cm"][0][0]], rel=1e-6)

    unpacked = read_station_package(package)
    for name in ("cl", "cd", "cm"):
        np.testing.assert_array_equal(unpacked.columns[name], np.array(served[name]))
    polar = unpacked.to_polar(5)
    assert polar.reynolds == pytest.approx(station_reynolds_by_hand(7.6, 3.841), rel=1e-12)
    assert polar.thickness == DEFINITION["stations"][5]["thickness"]

    again = demo_client.get(f"{BLADE}/tables", params={"format": "zip"}, headers=reader)
    assert again.content == package  # deterministic bytes
    etag = answer.headers["etag"]
    assert demo_client.get(f"{BLADE}/tables", params={"format": "zip"},
                           headers={**reader, "If-None-Match": etag}).status_code == 304
    other = demo_client.get(f"{BLADE}/tables",
                            params={"format": "zip", "rotation_model": "none"}, headers=reader)
    assert json.loads(zipfile.ZipFile(io.BytesIO(other.content)).read("manifest.json"))[
        "settings"]["rotation"] is None


def test_altered_station_file_is_refused_by_name(demo_client, tokens):
    package = demo_client.get(f"{BLADE}/tables", params={"format": "zip"},
                              headers=tokens.header("reader")).content
    source = zipfile.ZipFile(io.BytesIO(package))
    altered = io.BytesIO()
    with zipfile.ZipFile(altered, "w") as target:
        for info in source.infolist():
            data = source.read(info.filename)
            if info.filename.endswith("station_03.csv"):
                data = data.replace(b"\n-180.0,", b"\n-180.0,9", 1)
            target.writestr(info, data)
    with pytest.raises(PackageError, match=r"station_03\.csv"):
        read_station_package(altered.getvalue())


def test_client_reads_the_station_package_and_stations_carry_their_conditions(
    demo_client, tokens, tmp_path
):
    # the client's requests go to the application in-process, through the test transport
    client = PolarClient("http://testserver", token=tokens.reader,
                         transport=demo_client._transport)
    target = tmp_path / "skerry-48.zip"
    package = client.station_package("skerry-48", path=target)
    assert target.read_bytes()[:2] == b"PK"
    assert package.manifest["blade"]["name"] == "skerry-48"
    blade = client.blade_set("skerry-48")
    station = blade.to_polar(station=5)
    assert station.reynolds == pytest.approx(station_reynolds_by_hand(7.6, 3.841), rel=1e-12)
    assert station.thickness == DEFINITION["stations"][5]["thickness"]
    # a served station is full range already: the extension leaves it and reports no joins
    extended = aero.extend_full_range(station, "viterna", aspect_ratio=14)
    assert extended.table_equal(station) and extended.history[-1]["joins"] == []
    blend = client.blend("skua", thickness=0.27, reynolds=5e6).to_polar()
    assert (blend.thickness, blend.reynolds, blend.surface) == (0.27, 5e6, "clean")
