"""One table reached through several recipes: a blend inside the data range is the same table
with and without clamping, so two recipes share one content hash. The full content hash
answers with every recipe (table, lineage, verification; over HTTP and on the command line),
never 409; a prefix of it names that one content too."""

from __future__ import annotations

import json

import pytest

from polarsvc.cli import main

BLEND = "/api/v1/families/skua/blend"


@pytest.fixture
def shared(demo_client, tokens):
    """Two blends of one content: (content hash, [recipe hashes])."""
    reader = tokens.header("reader")
    answers = [
        demo_client.get(BLEND, params={"thickness": 0.27, "reynolds": 5e6, "clamp": clamp},
                        headers=reader).json()
        for clamp in ("false", "true")
    ]
    assert answers[0]["content_hash"] == answers[1]["content_hash"]
    assert answers[0]["recipe_hash"] != answers[1]["recipe_hash"]
    return answers[0]["content_hash"], [a["recipe_hash"] for a in answers]


def test_full_content_hash_lineage_lists_every_recipe(demo_client, tokens, shared):
    content, recipes = shared
    reader = tokens.header("reader")
    answer = demo_client.get(f"/api/v1/derived/{content}/lineage", headers=reader)
    assert answer.status_code == 200, answer.text
    tree = answer.json()
    assert tree["node"] == "content" and tree["content_hash"] == content
    assert [r["recipe_hash"] for r in tree["recipes"]] == recipes
    assert [r["params"]["clamp"] for r in tree["recipes"]] == [False, True]
    text = demo_client.get(f"/api/v1/derived/{content}/lineage", params={"format": "text"},
                           headers=reader).text
    assert all(recipe in text for recipe in recipes) and "2 recipes" in text
    # a recipe hash still names its own tree
    single = demo_client.get(f"/api/v1/derived/{recipes[1]}/lineage", headers=reader).json()
    assert single["node"] == "derived" and single["recipe_hash"] == recipes[1]


def test_full_content_hash_verify_checks_every_recipe(demo_client, tokens, shared):
    content, recipes = shared
    answer = demo_client.post(f"/api/v1/derived/{content}/verify",
                              headers=tokens.header("reader"))
    assert answer.status_code == 200, answer.text
    report = answer.json()
    assert report["matches"] is True and report["problems"] == []
    assert [r["recipe_hash"] for r in report["recipes"]] == recipes
    assert all(r["recomputed_content_hash"] == content for r in report["recipes"])


def test_full_content_hash_and_its_prefix_serve_the_table(demo_client, tokens, shared):
    content, recipes = shared
    reader = tokens.header("reader")
    for key in (content, content[:12]):
        answer = demo_client.get(f"/api/v1/derived/{key}", headers=reader)
        assert answer.status_code == 200, answer.text
        body = answer.json()
        assert body["content_hash"] == content
        assert body["same_content_recipes"] == recipes
    lineage = demo_client.get(f"/api/v1/derived/{content[:12]}/lineage", headers=reader)
    assert lineage.status_code == 200 and lineage.json()["node"] == "content"


def test_command_line_lineage_and_verify_take_the_full_content_hash(
    demo_client, tokens, shared, prepared_db, capsys
):
    content, recipes = shared
    url = prepared_db[0]
    capsys.readouterr()
    assert main(["--database-url", url, "lineage", content]) == 0
    text = capsys.readouterr().out
    assert all(recipe in text for recipe in recipes)
    assert main(["--database-url", url, "lineage", content, "--json"]) == 0
    tree = json.loads(capsys.readouterr().out)
    assert [r["recipe_hash"] for r in tree["recipes"]] == recipes
    assert main(["--database-url", url, "verify", content]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["matches"] is True and len(report["recipes"]) == 2
