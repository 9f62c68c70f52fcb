"""Families and airfoils over HTTP: creation (idempotent when identical, 409 when not),
coordinates kept, listings filtered."""

from __future__ import annotations


def test_airfoil_creation_is_idempotent_and_keeps_coordinates(client, tokens):
    curator, reader = tokens.header("curator"), tokens.header("reader")
    assert client.post("/api/v1/families", json={"name": "tern"}, headers=curator
                       ).status_code == 201
    assert client.post("/api/v1/families", json={"name": "tern"}, headers=curator
                       ).status_code == 200
    outline = {"x": [1.0, 0.5, 0.0, 0.5, 1.0], "y": [0.0, 0.06, 0.0, -0.05, 0.0]}
    body = {"name": "TERN-240", "thickness": 0.24, "family": "tern", "coordinates": outline}
    assert client.post("/api/v1/airfoils", json=body, headers=curator).status_code == 201
    assert client.post("/api/v1/airfoils", json=body, headers=curator).status_code == 200
    different = client.post("/api/v1/airfoils", json={**body, "thickness": 0.25},
                            headers=curator)
    assert different.status_code == 409
    airfoil = client.get("/api/v1/airfoils/TERN-240", headers=reader).json()
    assert airfoil["coordinates"] == outline
    assert airfoil["thickness"] == 0.24 and airfoil["family"] == "tern"
    percent = client.post("/api/v1/airfoils", json={"name": "TERN-X", "thickness": 24},
                          headers=curator)
    assert percent.status_code == 422  # thickness is a fraction, not a percentage
    listing = client.get("/api/v1/airfoils", params={"family": "tern"}, headers=reader).json()
    assert [a["name"] for a in listing] == ["TERN-240"]
    families = client.get("/api/v1/families", headers=reader).json()
    assert families == [{**families[0], "name": "tern",
                         "airfoils": [{"name": "TERN-240", "thickness": 0.24}]}]


def test_revision_listing_filters_by_family_surface_and_reynolds(demo_client, tokens):
    reader = tokens.header("reader")
    everything = demo_client.get("/api/v1/polars", params={"family": "skua"},
                                 headers=reader).json()
    assert len(everything) == 42  # 7 airfoils x 3 Reynolds numbers x 2 surfaces (seed data)
    assert demo_client.get("/api/v1/polars", params={"family": "none"}, headers=reader
                           ).json() == []
    rough = demo_client.get("/api/v1/polars", params={"family": "skua", "surface": "rough",
                                                      "reynolds": 8e6}, headers=reader).json()
    assert {r["airfoil"] for r in rough} == {a["name"] for a in demo_client.get(
        "/api/v1/airfoils", params={"family": "skua"}, headers=reader).json()}
    assert all(r["conditions"]["surface"] == "rough" for r in rough)
