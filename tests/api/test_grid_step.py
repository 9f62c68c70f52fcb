"""Coarse angle grids: a step too coarse for the attached-flow lift line (which needs two
points within +-5 deg of the zero-lift angle, see polarsvc.aero.characteristics) is refused
for blade sets and blends with a 422 naming ``step_deg``; single tables and blends
answer a coarse grid or refuse it naming ``step_deg``, never with a 500."""

from __future__ import annotations

import pytest


@pytest.mark.parametrize(("step", "model"), [(30, "snel"), (20, "snel"), (10.5, "snel"),
                                             (5.01, "snel"), (30, "none")])
def test_blade_set_with_a_coarse_step_is_a_422_naming_step_deg(demo_client, tokens, step, model):
    answer = demo_client.get("/api/v1/blades/skerry-48/tables",
                             params={"step_deg": step, "model": model},
                             headers=tokens.header("reader"))
    assert answer.status_code == 422, answer.text
    assert answer.json()["parameter"] == "step_deg"
    assert "5" in answer.json()["detail"]


def test_blade_set_at_the_coarsest_accepted_step_is_served(demo_client, tokens):
    answer = demo_client.get("/api/v1/blades/skerry-48/tables",
                             params={"step_deg": 5}, headers=tokens.header("reader"))
    assert answer.status_code == 200, answer.text
    alpha = answer.json()["alpha_deg"]
    # -180..180 in 5 deg steps: 73 angles (arithmetic)
    assert len(alpha) == 73 and alpha[0] == -180.0 and alpha[-1] == 180.0


def test_coarse_steps_on_single_tables_and_blends_never_give_500(demo_client, tokens):
    reader = tokens.header("reader")
    revision = demo_client.get("/api/v1/polars", headers=reader).json()[0]["content_hash"]
    urls = [
        (f"/api/v1/polars/{revision}/extended", {}),
        (f"/api/v1/polars/{revision}/resampled", {}),
        (f"/api/v1/polars/{revision}/augmented", {"r_over_R": 0.3, "chord_over_r": 0.3}),
        ("/api/v1/families/skua/blend", {"thickness": 0.25, "reynolds": 4e6}),
    ]
    for url, params in urls:
        answer = demo_client.get(url, params={**params, "step_deg": 30}, headers=reader)
        assert answer.status_code in (200, 422), (url, answer.text)
        if answer.status_code == 422:
            assert answer.json()["parameter"] == "step_deg"
