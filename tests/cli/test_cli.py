"""The command line on a local database: bulk import with per-file reports, export and
re-import giving identical hashes, tokens, review, audit, lineage and verify."""

from __future__ import annotations

import re
import shutil
from pathlib import Path

import pytest
from sqlalchemy import select

from polarsvc import pipeline
from polarsvc.cli import is_loopback, main
from polarsvc.store.db import make_engine, make_session_factory, session_scope
from polarsvc.store.models import PolarRevision

REPO = Path(__file__).resolve().parents[2]
SEED = REPO / "seed_polars" / "skua"


def hashes(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with session_scope(make_session_factory(engine), write=False) as session:
            return set(session.scalars(select(PolarRevision.content_hash)).all())
    finally:
        engine.dispose()


@pytest.fixture
def url(database_url: str) -> str:
    return database_url


def test_bulk_import_reports_each_file_and_export_reimport_gives_identical_hashes(
    url, tmp_path, capsys, database_url
):
    folder = tmp_path / "incoming"
    folder.mkdir()
    for path in sorted(SEED.glob("SKUA-2*_clean.csv")):
        shutil.copy(path, folder / path.name)
    (folder / "broken.csv").write_text("# airfoil: X\nalpha_deg,cl,cd\n0,0.1,nan\n")
    code = main(["--database-url", url, "import", "--create-families", str(folder)])
    out = capsys.readouterr()
    assert code == 1  # one file refused
    assert re.search(r"broken\.csv: refused \(.*line 3", out.out)
    assert out.out.count(": stored (1 stored, 0 identical)") == 6
    assert "7 files: 6 stored, 0 identical, 1 refused" in out.err
    (folder / "broken.csv").unlink()
    assert main(["--database-url", url, "import", "--create-families", str(folder)]) == 0
    assert "6 identical" in capsys.readouterr().err
    stored = hashes(url)
    assert len(stored) == 6

    exported = tmp_path / "exported"
    assert main(["--database-url", url, "export", str(exported)]) == 0
    assert len(list(exported.glob("*.csv"))) == 6
    second = f"sqlite:///{tmp_path / 'second.db'}"
    assert main(["--database-url", second, "import", "--create-families", str(exported)]) == 0
    assert hashes(second) == stored

    exported_json = tmp_path / "exported-json"
    assert main(["--database-url", url, "export", str(exported_json), "--format", "json"]) == 0
    third = f"sqlite:///{tmp_path / 'third.db'}"
    assert main(["--database-url", third, "import", "--create-families", str(exported_json)]) == 0
    assert hashes(third) == stored


def test_tokens_review_audit_lineage_and_verify(url, tmp_path, capsys):
    assert main(["--database-url", url, "import", "--create-families", str(SEED)]) == 0
    capsys.readouterr()
    assert main(["--database-url", url, "token", "create", "ci-reader", "--role", "reader"]) == 0
    secret = capsys.readouterr().out.strip()
    assert secret.startswith("psv_")
    assert main(["--database-url", url, "token", "list"]) == 0
    listing = capsys.readouterr().out
    assert "ci-reader\treader\tactive" in listing and secret not in listing
    assert main(["--database-url", url, "token", "revoke", "ci-reader"]) == 0

    revision = sorted(hashes(url))[0]
    assert main(["--database-url", url, "review", "approve", revision[:12]]) == 0
    assert "approved" in capsys.readouterr().out
    with pytest.raises(SystemExit) as usage:  # a deprecation needs a reason
        main(["--database-url", url, "review", "deprecate", revision])
    assert usage.value.code == 2

    engine = make_engine(url)
    factory = make_session_factory(engine)
    served = pipeline.family_blend(
        factory, family="skua",
        params=pipeline.recipes.blend_params(thickness=0.27, reynolds=3e6), approved_only=False)
    engine.dispose()
    capsys.readouterr()
    assert main(["--database-url", url, "lineage", served.content_hash]) == 0
    text = capsys.readouterr().out
    assert served.recipe_hash in text and "blended table" in text
    assert main(["--database-url", url, "verify", served.content_hash[:16]]) == 0
    assert '"matches": true' in capsys.readouterr().out
    assert main(["--database-url", url, "audit", "--object", revision]) == 0
    audit = capsys.readouterr().out
    assert "polar.store" in audit and "polar.review" in audit


def test_serve_refuses_public_reads_on_a_non_loopback_address(capsys):
    assert main(["serve", "--host", "0.0.0.0", "--public-reads"]) == 2
    assert "refusing public reads" in capsys.readouterr().err
    assert is_loopback("127.0.0.1") and is_loopback("::1") and is_loopback("localhost")
    assert not is_loopback("0.0.0.0") and not is_loopback("192.0.2.1")


def test_readme_test_command_is_the_one_ci_runs():
    readme = (REPO / "README.md").read_text()
    ci = (REPO / ".ci" / "run").read_text()
    blocks = re.findall(r"```sh\n(.*?)\n```", readme, flags=re.S)
    test_command = next(b for b in blocks if "pytest" in b)
    assert test_command in ci.splitlines()


def test_bundle_round_trip_through_the_command_line(url, tmp_path, capsys):
    assert main(["--database-url", url, "import", "--create-families", str(SEED)]) == 0
    revision = sorted(hashes(url))[0]
    assert main(["--database-url", url, "review", "approve", revision]) == 0
    bundle = tmp_path / "bundle"
    assert main(["--database-url", url, "bundle", "export", str(bundle)]) == 0
    assert (bundle / "manifest.json").is_file()
    target = f"sqlite:///{tmp_path / 'restored.db'}"
    assert main(["--database-url", target, "bundle", "import", str(bundle)]) == 0
    assert hashes(target) == hashes(url)
    csv_file = next(bundle.glob("polars/*/*.csv"))
    csv_file.write_text(csv_file.read_text().replace("0.", "1.", 1))
    again = f"sqlite:///{tmp_path / 'refused.db'}"
    capsys.readouterr()
    assert main(["--database-url", again, "bundle", "import", str(bundle)]) == 1
    assert csv_file.name in capsys.readouterr().err
    assert hashes(again) == set()


CORPUS = REPO / "tests" / "quality_corpus"


def test_import_refuses_quality_errors_naming_the_line_and_an_override_stores(url, capsys):
    assert main(["--database-url", url, "family", "create", "skua"]) == 0
    capsys.readouterr()
    assert main(["--database-url", url, "import", str(CORPUS / "cl_fifty.csv")]) == 1
    out = capsys.readouterr().out
    # line 58 of the corpus file holds alpha = 8 deg, cl = 50 (counted in the file)
    assert "refused" in out and "line 58, field 'cl'" in out and "cl-magnitude" in out
    assert main(["--database-url", url, "import", "--override-quality", "checked by hand",
                 str(CORPUS / "cl_fifty.csv")]) == 0
    out = capsys.readouterr().out
    assert "error cl-magnitude (line 58, field cl)" in out


def test_a_misspelt_family_is_refused_on_import(url, capsys):
    assert main(["--database-url", url, "family", "create", "skua"]) == 0
    assert main(["--database-url", url, "import", str(CORPUS / "misspelt_family.csv")]) == 1
    out = capsys.readouterr().out
    assert "family 'skau' does not exist" in out and "polarsvc family create skau" in out


def test_audit_shows_the_review_state_change_and_reason(url, capsys):
    assert main(["--database-url", url, "import", "--create-families", str(SEED)]) == 0
    revision = sorted(hashes(url))[0]
    assert main(["--database-url", url, "review", "deprecate", revision,
                 "--reason", "tunnel wall correction missing"]) == 0
    capsys.readouterr()
    assert main(["--database-url", url, "audit", "--object", revision]) == 0
    (review,) = [line for line in capsys.readouterr().out.splitlines() if "polar.review" in line]
    assert "draft -> deprecated (reason: tunnel wall correction missing)" in review
    assert f"{revision} -> {revision}" not in review


def test_corrections_from_the_command_line(url, capsys):
    assert main(["--database-url", url, "import", "--create-families", str(SEED)]) == 0
    assert main(["--database-url", url, "airfoil", "rename", "SKUA-250", "SKUA-250-B",
                 "--reason", "series naming"]) == 0
    assert main(["--database-url", url, "airfoil", "retire", "SKUA-250",  # the alias resolves
                 "--reason", "suspect model"]) == 0
    assert main(["--database-url", url, "family", "create", "spare"]) == 0
    assert main(["--database-url", url, "airfoil", "move", "SKUA-250-B", "spare",
                 "--reason", "kept apart"]) == 0
    revision = sorted(hashes(url))[0]
    assert main(["--database-url", url, "review", "correct", revision,
                 "--facility", "Skerry tunnel (fictional)", "--reason", "was missing"]) == 0
    capsys.readouterr()
    assert main(["--database-url", url, "audit", "--object", "SKUA-250-B"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert any("airfoil.rename" in line and "name=SKUA-250 -> name=SKUA-250-B (reason: series "
               "naming)" in line for line in lines)
    assert any("airfoil.move" in line and "family=skua -> family=spare" in line
               for line in lines)
    assert main(["--database-url", url, "audit", "--actor", "x-nobody"]) == 0
