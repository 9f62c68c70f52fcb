"""Rotor performance over HTTP: a derived object like the tables (recipe naming the blade
set, content hash, lineage, verification, ETag, formats), agreeing with the rotor layer
called directly, and the comparison of two blade sets."""

from __future__ import annotations

import math

import numpy as np
import pytest

from polarsvc import performance
from polarsvc.formats.binary import (
    ARROW_MEDIA_TYPE,
    NPZ_MEDIA_TYPE,
    decode_arrays_arrow,
    decode_arrays_npz,
)
from polarsvc.rotor import HOURS_PER_YEAR

URL = "/api/v1/blades/skerry-48/performance"


def get_performance(client, tokens, **params):
    response = client.get(URL, params=params, headers=tokens.header("reader"))
    assert response.status_code == 200, response.text
    return response


def test_performance_is_a_derived_object_on_the_blade_set(demo_client, tokens):
    response = get_performance(demo_client, tokens)
    result = response.json()
    assert result["kind"] == "rotor"
    assert "screening check" in result["rotor_caution"]
    assert "IEC 61400-1" in result["caution"]
    assert result["reports"]["assumptions"]
    # self-describing: the machine, the model switches and the winds
    described = result["describes"]
    assert described["turbine"]["rated_power_w"] == 3.0e6
    assert described["model"]["tip_loss"] is True
    assert described["wind_distributions"][0] == "IEC class I: Rayleigh, mean 10 m/s"
    # the recipe names the blade-set recipe it used: the one the tables endpoint serves
    tables = demo_client.get("/api/v1/blades/skerry-48/tables",
                             headers=tokens.header("reader")).json()
    assert result["recipe"]["inputs"]["blade_set"] == tables["recipe_hash"]
    assert result["blade_set_recipe_hash"] == tables["recipe_hash"]
    assert result["recipe"]["params"]["blade_set"] == tables["recipe"]["params"]
    assert [i["revision"] for i in result["inputs"]] == [i["revision"] for i in tables["inputs"]]
    # lineage: rotor result -> blade set -> stored revisions
    lineage = demo_client.get(f"/api/v1/derived/{result['content_hash']}/lineage",
                              headers=tokens.header("reader")).json()
    assert lineage["kind"] == "rotor"
    assert lineage["blade_set"]["content_hash"] == tables["content_hash"]
    assert len(lineage["blade_set"]["inputs"]) == len(tables["inputs"])
    assert all(leaf["content_intact"] for leaf in lineage["inputs"])
    text = demo_client.get(f"/api/v1/derived/{result['content_hash']}/lineage",
                           params={"format": "text"}, headers=tokens.header("reader")).text
    assert tables["recipe_hash"] in text
    # verification recomputes the blade set and the rotor result from the recipe
    verdict = demo_client.post(f"/api/v1/derived/{result['recipe_hash']}/verify",
                               headers=tokens.header("reader")).json()
    assert verdict["matches"], verdict
    # the stored object is served by hash as well
    stored = demo_client.get(f"/api/v1/derived/{result['content_hash']}",
                             headers=tokens.header("reader")).json()
    assert stored["power_w"] == result["power_w"]


def test_numbers_are_the_rotor_layer_called_directly(demo_client, tokens):
    result = get_performance(demo_client, tokens).json()
    tables = demo_client.get("/api/v1/blades/skerry-48/tables",
                             headers=tokens.header("reader")).json()
    blade = demo_client.get("/api/v1/blades/skerry-48",
                            headers=tokens.header("reader")).json()["definition"]
    arrays, _ = performance.compute_performance(
        np.array(tables["alpha_deg"]), np.array(tables["cl"]), np.array(tables["cd"]), blade,
        result["recipe"]["params"]["rotor"],
        prepared_reynolds=[s["reynolds_requested"] for s in tables["reports"]["stations"]],
    )
    for name, values in arrays.items():
        np.testing.assert_array_equal(np.array(result[name], dtype=float), values, err_msg=name)
    # annual energy = 8766 h x mean power (definition), capacity factor against 3 MW
    energy = np.array(result["annual_energy_wh"])
    np.testing.assert_allclose(energy, HOURS_PER_YEAR * np.array(result["mean_power_w"]),
                               rtol=1e-14)
    np.testing.assert_allclose(result["capacity_factor"],
                               np.array(result["mean_power_w"]) / 3.0e6, rtol=1e-14)
    # rated power held within 0.1 % above the rated wind speed
    rated = result["rated_wind_speed_m_s"][0]
    speeds = np.array(result["wind_speed_m_s"])
    np.testing.assert_allclose(np.array(result["power_w"])[speeds > rated], 3.0e6, rtol=1e-3)


def test_formats_etag_and_cache(demo_client, tokens):
    first = get_performance(demo_client, tokens)
    assert first.headers["x-polarsvc-cache"] == "miss"
    again = get_performance(demo_client, tokens)
    assert again.headers["x-polarsvc-cache"] == "hit"
    assert again.headers["etag"] == first.headers["etag"]
    unchanged = demo_client.get(URL, headers={**tokens.header("reader"),
                                              "If-None-Match": first.headers["etag"]})
    assert unchanged.status_code == 304
    arrow = get_performance(demo_client, tokens, format="arrow")
    assert arrow.headers["content-type"] == ARROW_MEDIA_TYPE
    arrays, meta = decode_arrays_arrow(arrow.content)
    assert meta["content_hash"] == first.json()["content_hash"]
    np.testing.assert_array_equal(arrays["cp"], np.array(first.json()["cp"]))
    assert arrays["normal_force_n_per_m"].shape == (len(first.json()["wind_speed_m_s"]), 20)
    npz = get_performance(demo_client, tokens, format="npz")
    assert npz.headers["content-type"] == NPZ_MEDIA_TYPE
    arrays_npz, meta_npz = decode_arrays_npz(npz.content)
    assert meta_npz["recipe_hash"] == first.json()["recipe_hash"]
    for name, values in arrays.items():
        np.testing.assert_array_equal(arrays_npz[name], values)
    curve = get_performance(demo_client, tokens, format="csv").text
    lines = [line for line in curve.splitlines() if not line.startswith("#")]
    assert lines[0].split(",") == list(performance.CURVE_COLUMNS)
    assert len(lines) - 1 == len(first.json()["wind_speed_m_s"])
    stations = get_performance(demo_client, tokens, format="csv", part="stations").text
    rows = [line for line in stations.splitlines() if not line.startswith("#")]
    assert len(rows) - 1 == len(first.json()["wind_speed_m_s"]) * 20
    assert "# part: stations" in stations
    assert "# turbine_rated_power_w: 3000000.0" in stations
    # CSV parts have their own ETags
    assert (get_performance(demo_client, tokens, format="csv", part="cp").headers["etag"]
            != get_performance(demo_client, tokens, format="csv").headers["etag"])


def test_request_settings_enter_the_recipe(demo_client, tokens):
    base = get_performance(demo_client, tokens).json()
    changed = get_performance(
        demo_client, tokens, rated_power_w=2.5e6, weibull_k=2.2, weibull_a_m_s=9.5,
        loads_at_m_s=11.3, tip_loss=False,
    ).json()
    assert changed["recipe_hash"] != base["recipe_hash"]
    assert changed["blade_set_recipe_hash"] == base["blade_set_recipe_hash"]
    rotor = changed["recipe"]["params"]["rotor"]
    assert rotor["turbine"]["rated_power_w"] == 2.5e6
    assert rotor["tip_loss"] is False and rotor["weibull"] == [[2.2, 9.5]]
    assert 11.3 in changed["wind_speed_m_s"]
    assert changed["reports"]["distributions"][-1] == "Weibull k=2.2, A=9.5 m/s"
    assert max(changed["power_w"]) == pytest.approx(2.5e6, rel=1e-9)


def test_refusals_name_the_parameter(demo_client, tokens):
    response = demo_client.get(URL, params={"weibull_k": 2.0}, headers=tokens.header("reader"))
    assert response.status_code == 422
    assert response.json()["parameter"] == "weibull_a_m_s"
    response = demo_client.get(URL, params={"cut_in_m_s": 30.0},
                               headers=tokens.header("reader"))
    assert response.status_code == 422
    assert response.json()["parameter"] == "cut_in_m_s"
    assert demo_client.get(URL).status_code == 401
    # a blade without turbine data needs it in the request
    blade = demo_client.get("/api/v1/blades/skerry-48",
                            headers=tokens.header("reader")).json()["definition"]
    bare = {k: v for k, v in blade.items() if k != "turbine"}
    bare["name"] = "skerry-48-bare"
    assert demo_client.post("/api/v1/blades", json=bare,
                            headers=tokens.header("curator")).status_code == 201
    response = demo_client.get("/api/v1/blades/skerry-48-bare/performance",
                               headers=tokens.header("reader"))
    assert response.status_code == 422
    assert response.json()["parameter"] == "rated_power_w"
    turbine = {k: v for k, v in blade["turbine"].items() if k != "notes"}
    assert demo_client.get("/api/v1/blades/skerry-48-bare/performance", params=turbine,
                           headers=tokens.header("reader")).status_code == 200


def test_comparison_of_two_preparations(demo_client, tokens):
    body = {"a": {"blade": "skerry-48"}, "b": {"blade": "skerry-48", "rotation_model": "none"}}
    response = demo_client.post("/api/v1/performance/compare", json=body,
                                headers=tokens.header("reader"))
    assert response.status_code == 200, response.text
    comparison = response.json()
    a = get_performance(demo_client, tokens).json()
    b = get_performance(demo_client, tokens, rotation_model="none").json()
    assert comparison["a"]["content_hash"] == a["content_hash"]
    assert comparison["b"]["content_hash"] == b["content_hash"]
    assert comparison["sense"] == "b minus a"
    # differences: the rotation block of the blade-set parameters, nothing else
    changed = {d["parameter"] for d in comparison["differences"]["parameters"]}
    assert changed and all(p.startswith("blade_set.rotation") for p in changed)
    assert comparison["differences"]["blade"] is None
    assert comparison["differences"]["same_blade_set"] is False
    # delta annual energy is b - a of the two stored results, in MWh and %
    for i, row in enumerate(comparison["annual_energy"]):
        ea, eb = a["annual_energy_wh"][i], b["annual_energy_wh"][i]
        assert row["delta_mwh"] == pytest.approx((eb - ea) / 1e6, rel=1e-12)
        assert row["delta_percent"] == pytest.approx(100 * (eb - ea) / ea, rel=1e-12)
    delta = np.array(comparison["cp_lambda"]["delta"])
    np.testing.assert_allclose(delta, np.array(b["cp_lambda"]) - np.array(a["cp_lambda"]),
                               atol=1e-15)
    rated = comparison["at_rated_wind_speed"]
    assert rated["root_flap_moment_n_m"]["delta"] == pytest.approx(
        rated["root_flap_moment_n_m"]["b"] - rated["root_flap_moment_n_m"]["a"])
    assert rated["wind_speed_m_s"]["a"] == pytest.approx(a["rated_wind_speed_m_s"][0])


def test_comparison_with_itself_is_zero(demo_client, tokens):
    body = {"a": {"blade": "skerry-48"}, "b": {"blade": "skerry-48"}}
    comparison = demo_client.post("/api/v1/performance/compare", json=body,
                                  headers=tokens.header("reader")).json()
    assert comparison["differences"]["parameters"] == []
    assert comparison["differences"]["same_blade_set"] is True
    assert all(row["delta_mwh"] == 0.0 for row in comparison["annual_energy"])
    assert not any(np.abs(comparison["power_curve"]["delta_w"]))
    assert math.isclose(comparison["rated"]["a"]["thrust_n"], comparison["rated"]["b"]["thrust_n"])


def test_a_rated_power_below_a_watt_is_refused_in_the_schema_and_by_the_rotor_layer(
        demo_client, tokens):
    # The smallest positive double as rated power overflowed the power scale (wind power over
    # rated power) to infinity and failed inside the pitch solve with a server error. A wind
    # turbine is rated at watts at the least (common practice, no source): the bound is
    # published and refused with the parameter named.
    response = demo_client.get(URL, params={"rated_power_w": 5e-324},
                               headers=tokens.header("reader"))
    assert response.status_code == 422
    assert response.json()["detail"][0]["loc"] == ["query", "rated_power_w"]
    document = demo_client.get("/api/v1/openapi.json").json()
    parameters = document["paths"]["/api/v1/blades/{key}/performance"]["get"]["parameters"]
    rated = next(p for p in parameters if p["name"] == "rated_power_w")["schema"]
    assert rated["anyOf"][0]["minimum"] == 1
    turbine = document["components"]["schemas"]["TurbineIn"]["properties"]["rated_power_w"]
    assert turbine["anyOf"][0]["minimum"] == 1


def test_a_blade_key_longer_than_a_hash_is_an_unknown_blade(demo_client, tokens):
    # 65 and more hexadecimal digits are neither a stored name nor a hash (64 digits, SHA-256):
    # the blade is not found (404), not a refused hash naming a content_hash field.
    key = "0" * 199
    reader = tokens.header("reader")
    assert demo_client.get(f"/api/v1/blades/{key}", headers=reader).status_code == 404
    body = {"a": {"blade": key}, "b": {"blade": "0"}}
    response = demo_client.post("/api/v1/performance/compare", json=body, headers=reader)
    assert response.status_code == 404, response.text
