"""Every part of a rotor result and of a comparison in CSV and the binary forms, over
HTTP, checked value by value against the JSON answer of the same result (a format round
trip: floats must come back bit for bit)."""

from __future__ import annotations

import csv
import io

import numpy as np
import pytest

from polarsvc.formats.binary import (
    ARROW_AVAILABLE,
    ARROW_MEDIA_TYPE,
    NPZ_MEDIA_TYPE,
    decode_arrays_arrow,
    decode_arrays_npz,
)

URL = "/api/v1/blades/skerry-48/performance"
COMPARE = "/api/v1/performance/compare"
BODY = {"a": {"blade": "skerry-48"}, "b": {"blade": "skerry-48", "rotation_model": "none"}}


def parse_csv(text: str) -> tuple[dict[str, str], dict[str, np.ndarray]]:
    """Comment lines and columns of a CSV answer, every cell read by Python's float()."""
    comments, rows = {}, []
    for line in text.splitlines():
        if line.startswith("# "):
            key, _, value = line[2:].partition(": ")
            comments[key] = value
        else:
            rows.append(line)
    table = list(csv.reader(io.StringIO("\n".join(rows))))
    header, body = table[0], table[1:]
    return comments, {name: np.array([float(row[i]) for row in body])
                      for i, name in enumerate(header)}


def same(actual: np.ndarray, expected: object) -> None:
    """Bit-for-bit equality (NaN where the JSON says null)."""
    wanted = np.array([np.nan if v is None else v for v in np.ravel(
        np.array(expected, dtype=object))], dtype=np.float64)
    assert actual.shape == wanted.shape
    assert np.array_equal(actual.view(np.int64), wanted.view(np.int64)), (actual, wanted)


def expected_rotor_parts(result: dict) -> dict[str, dict[str, object]]:
    """The parts of a rotor result, written out here from its JSON arrays."""
    tsr, pitch = result["tip_speed_ratio"], result["pitch_deg"]
    speeds, radii = result["wind_speed_m_s"], result["radius_m"]
    stations = ("axial_induction", "tangential_induction", "inflow_angle_deg", "alpha_deg",
                "cl", "cd", "normal_force_n_per_m", "tangential_force_n_per_m")
    curve = ("wind_speed_m_s", "rotor_speed_rpm", "curve_tip_speed_ratio", "curve_pitch_deg",
             "control_mode", "power_w", "aero_power_w", "curve_cp", "curve_ct", "thrust_n",
             "torque_n_m", "root_flap_moment_n_m", "root_edge_moment_n_m")
    return {
        "curve": {name: result[name] for name in curve},
        "cp": {"tip_speed_ratio": [t for t in tsr for _ in pitch],
               "pitch_deg": [p for _ in tsr for p in pitch],
               "cp": [v for row in result["cp"] for v in row],
               "ct": [v for row in result["ct"] for v in row]},
        "cp_lambda": {"tip_speed_ratio": tsr, "cp": result["cp_lambda"],
                      "ct": result["ct_lambda"]},
        "stations": {"wind_speed_m_s": [u for u in speeds for _ in radii],
                     "radius_m": [r for _ in speeds for r in radii],
                     **{name: [v for row in result[name] for v in row] for name in stations}},
        "energy": {"distribution": list(range(len(result["annual_energy_wh"]))),
                   "annual_energy_wh": result["annual_energy_wh"],
                   "mean_power_w": result["mean_power_w"],
                   "capacity_factor": result["capacity_factor"]},
        "optimum": {"best_tip_speed_ratio": result["optimum"][:1],
                    "fine_pitch_deg": result["optimum"][1:2],
                    "cp_max": result["optimum"][2:],
                    "rated_wind_speed_m_s": result["rated_wind_speed_m_s"]},
        "reynolds": {"radius_m": radii, "reynolds_prepared": result["reynolds_prepared"],
                     "reynolds_min": result["reynolds_min"],
                     "reynolds_max": result["reynolds_max"]},
    }


def binary_forms() -> list[str]:
    return ["npz", "arrow"] if ARROW_AVAILABLE else ["npz"]


def decode(fmt: str, content: bytes) -> tuple[dict[str, np.ndarray], dict]:
    return decode_arrays_arrow(content) if fmt == "arrow" else decode_arrays_npz(content)


def test_every_part_of_a_stored_rotor_result(demo_client, tokens):
    reader = tokens.header("reader")
    result = demo_client.get(URL, headers=reader).json()
    key = result["content_hash"]
    stored = demo_client.get(f"/api/v1/derived/{key}", headers=reader)
    assert stored.status_code == 200
    assert stored.json()["power_w"] == result["power_w"]
    for part, columns in expected_rotor_parts(result).items():
        answer = demo_client.get(f"/api/v1/derived/{key}",
                                 params={"format": "csv", "part": part}, headers=reader)
        assert answer.status_code == 200, (part, answer.text)
        assert answer.headers["content-type"].startswith("text/csv")
        comments, table = parse_csv(answer.text)
        assert comments["part"] == part
        assert comments["content_hash"] == key
        assert list(table) == list(columns)
        for name, values in columns.items():
            same(table[name], values)
        for fmt in binary_forms():
            answer = demo_client.get(f"/api/v1/derived/{key}",
                                     params={"format": fmt, "part": part}, headers=reader)
            assert answer.status_code == 200, (part, fmt, answer.text)
            assert answer.headers["content-type"] == (
                ARROW_MEDIA_TYPE if fmt == "arrow" else NPZ_MEDIA_TYPE)
            arrays, meta = decode(fmt, answer.content)
            assert meta["part"] == part and meta["content_hash"] == key
            assert list(arrays) == list(columns)
            for name, values in columns.items():
                same(arrays[name], values)
        # the part in JSON too, and an ETag per representation
        as_json = demo_client.get(f"/api/v1/derived/{key}", params={"part": part},
                                  headers=reader)
        for name, values in columns.items():
            same(np.array(as_json.json()[name], dtype=np.float64), values)
    # defaults: CSV is the power curve, binary every array
    default_csv = demo_client.get(f"/api/v1/derived/{key}", params={"format": "csv"},
                                  headers=reader).text
    assert "# part: curve" in default_csv
    arrays, _ = decode_arrays_npz(demo_client.get(
        f"/api/v1/derived/{key}", params={"format": "npz"}, headers=reader).content)
    same(arrays["cp"].ravel(), [v for row in result["cp"] for v in row])
    assert set(result["reports"]["arrays"]) == set(arrays)


def test_unknown_part_is_refused_naming_it(demo_client, tokens):
    reader = tokens.header("reader")
    key = demo_client.get(URL, headers=reader).json()["content_hash"]
    for url in (f"/api/v1/derived/{key}", URL):
        answer = demo_client.get(url, params={"format": "csv", "part": "spanwise"},
                                 headers=reader)
        assert answer.status_code == 422
        # the parameter is named and the valid parts listed (input values are not echoed)
        detail = answer.json()["detail"][0]
        assert detail["loc"] == ["query", "part"]
        assert "'reynolds'" in detail["msg"] and "'stations'" in detail["msg"]
    answer = demo_client.post(COMPARE, params={"format": "csv", "part": "stations"},
                              json=BODY, headers=reader)
    assert answer.status_code == 422
    detail = answer.json()["detail"][0]
    assert detail["loc"] == ["query", "part"]
    assert "'rated'" in detail["msg"]


def expected_comparison_parts(comparison: dict) -> dict[str, dict[str, object]]:
    curve, cp = comparison["power_curve"], comparison["cp_lambda"]
    energy = comparison["annual_energy"]
    rated = comparison["rated"]
    quantities = ("wind_speed_m_s", "thrust_n", "root_flap_moment_n_m", "root_edge_moment_n_m")
    return {
        "curve": {name: curve[name] for name in ("wind_speed_m_s", "a_w", "b_w", "delta_w",
                                                   "delta_percent")},
        "cp_lambda": {name: cp[name] for name in ("tip_speed_ratio", "a", "b", "delta")},
        "energy": {"distribution": list(range(len(energy))),
                   **{name: [row[name] for row in energy]
                      for name in ("a_mwh", "b_mwh", "delta_mwh", "delta_percent",
                                   "a_capacity_factor", "b_capacity_factor")}},
        "rated": {f"{side}_{q}": [rated[side][q]] for side in ("a", "b") for q in quantities},
    }


@pytest.mark.parametrize("part", ["curve", "cp_lambda", "energy", "rated"])
def test_comparison_parts_in_csv_and_binary(demo_client, tokens, part):
    reader = tokens.header("reader")
    comparison = demo_client.post(COMPARE, json=BODY, headers=reader).json()
    columns = expected_comparison_parts(comparison)[part]
    answer = demo_client.post(COMPARE, params={"format": "csv", "part": part}, json=BODY,
                              headers=reader)
    assert answer.status_code == 200, answer.text
    comments, table = parse_csv(answer.text)
    assert comments["part"] == part and comments["sense"] == "b minus a"
    assert "IEC 61400-1" in comments["caution"]
    assert list(table) == list(columns)
    for name, values in columns.items():
        same(table[name], values)
    for fmt in binary_forms():
        answer = demo_client.post(COMPARE, params={"format": fmt, "part": part}, json=BODY,
                                  headers=reader)
        assert answer.status_code == 200, answer.text
        arrays, meta = decode(fmt, answer.content)
        assert meta["a"]["content_hash"] == comparison["a"]["content_hash"]
        assert meta["distributions"] == [row["distribution"]
                                         for row in comparison["annual_energy"]]
        assert "screening check" in meta["rotor_caution"]
        for name, values in columns.items():
            same(arrays[name], values)


def test_comparison_defaults(demo_client, tokens):
    reader = tokens.header("reader")
    comparison = demo_client.post(COMPARE, json=BODY, headers=reader).json()
    expected = expected_comparison_parts(comparison)
    text = demo_client.post(COMPARE, params={"format": "csv"}, json=BODY,
                            headers=reader).text
    assert "# part: curve" in text
    # the binary form without a part carries every part, named <part>.<column>
    arrays, meta = decode_arrays_npz(demo_client.post(
        COMPARE, params={"format": "npz"}, json=BODY, headers=reader).content)
    assert "part" not in meta
    assert set(arrays) == {f"{p}.{c}" for p, cols in expected.items() for c in cols}
    same(arrays["curve.delta_w"], expected["curve"]["delta_w"])
    # Accept header chooses CSV as for the tables
    accepted = demo_client.post(COMPARE, json=BODY,
                                headers={**reader, "Accept": "text/csv"})
    assert accepted.headers["content-type"].startswith("text/csv")
