"""The rotor performance and comparison commands on a local database (demo data)."""

from __future__ import annotations

import json

import pytest

from polarsvc.cli import main
from polarsvc.ingest import load_demo
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, make_session_factory, upgrade_database
from tests.api.conftest import SEED_DIR


@pytest.fixture
def demo_url(database_url: str) -> str:
    engine = make_engine(database_url)
    upgrade_database(engine)
    load_demo(make_session_factory(engine), SEED_DIR, actor=SYSTEM_ACTOR)
    engine.dispose()
    return database_url


def test_performance_summary_and_json(demo_url, capsys):
    assert main(["--database-url", demo_url, "performance", "skerry-48"]) == 0
    text = capsys.readouterr().out
    assert "rotor result" in text and "IEC class I" in text and "CAUTION" in text
    assert main(["--database-url", demo_url, "performance", "skerry-48", "--json"]) == 0
    result = json.loads(capsys.readouterr().out)
    assert result["kind"] == "rotor"
    assert text.splitlines()[0].endswith(result["content_hash"])
    # the lineage and verification commands work on rotor results as on tables
    assert main(["--database-url", demo_url, "verify", result["content_hash"]]) == 0
    assert json.loads(capsys.readouterr().out)["matches"] is True
    assert main(["--database-url", demo_url, "lineage", result["content_hash"]]) == 0
    assert result["recipe"]["inputs"]["blade_set"] in capsys.readouterr().out


def test_compare_and_refusals(demo_url, capsys):
    code = main(["--database-url", demo_url, "compare", "skerry-48",
                 "skerry-48:rotation_model=none,rated_power_w=2.8e6"])
    assert code == 0
    text = capsys.readouterr().out
    assert "parameter blade_set.rotation" in text
    assert "parameter rotor.turbine.rated_power_w: 3000000.0 -> 2800000.0" in text
    assert main(["--database-url", demo_url, "compare", "skerry-48", "skerry-48",
                 "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["differences"]["parameters"] == []
    assert main(["--database-url", demo_url, "performance",
                 "skerry-48:rotation_model=bogus"]) == 1
    assert "rotation_model" in capsys.readouterr().err
    assert main(["--database-url", demo_url, "performance", "nonesuch"]) == 1
