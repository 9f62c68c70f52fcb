"""`polarsvc serve` honours every setting it can read from the environment, one test per
setting, and documents them all in one table (DEVELOPERS.md, "Settings"). The server is
built by the command itself (uvicorn's Server.run is replaced by a catcher of the application); one
test starts a real server process."""

from __future__ import annotations

import re
from pathlib import Path

import httpx
import pytest
from fastapi.testclient import TestClient

from polarsvc import cli
from tests.api.conftest import SEED_DIR, make_tokens
from tests.serverproc import running_server

REPO = Path(__file__).resolve().parents[2]
CSV = (SEED_DIR / "skua" / "SKUA-210_re4e6_clean.csv").read_bytes()
SETTING_VARIABLES = ("POLARSVC_DATABASE_URL", "POLARSVC_PUBLIC_READS", "POLARSVC_READ_ONLY",
                     "POLARSVC_APPROVED_ONLY", "POLARSVC_MAX_UPLOAD_BYTES")


@pytest.fixture
def serve(monkeypatch, prepared_db, tmp_path):
    """Run ``polarsvc serve ARGS --port 0`` in a scratch folder with the environment given;
    return (exit code, the application it would have served)."""
    import uvicorn

    for name in SETTING_VARIABLES:
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setenv("POLARSVC_DATABASE_URL", prepared_db[0])
    monkeypatch.chdir(tmp_path)
    caught = {}

    def run(server, sockets=None):
        caught["app"] = server.config.app

    monkeypatch.setattr(uvicorn.Server, "run", run)

    def start(*args: str, **env: str):
        for name, value in env.items():
            monkeypatch.setenv(name, value)
        code = cli.main(["serve", *args, "--port", "0"])
        return code, caught.get("app")

    return start


def upload(client, headers, body=CSV):
    return client.post("/api/v1/polars", content=body,
                       headers={**headers, "Content-Type": "text/csv"})


def test_database_url(serve, tokens, prepared_db, tmp_path):
    code, app = serve()
    assert code == 0 and app.state.settings.database_url == prepared_db[0]
    with TestClient(app) as client:  # the tokens live in that database only
        assert client.get("/api/v1/families", headers=tokens.header("reader")).status_code == 200
    assert not (tmp_path / "polarsvc-data" / "polarsvc.db").exists()


def test_public_reads(serve):
    code, app = serve(POLARSVC_PUBLIC_READS="1")
    assert code == 0 and app.state.settings.public_reads
    with TestClient(app) as client:
        assert client.get("/api/v1/families").status_code == 200
        assert upload(client, {}).status_code == 401


def test_public_reads_from_the_environment_obey_the_loopback_rule(serve, capsys):
    code, _ = serve("--host", "0.0.0.0", POLARSVC_PUBLIC_READS="true")
    assert code == 2 and "refusing public reads" in capsys.readouterr().err
    code, app = serve("--host", "0.0.0.0", POLARSVC_PUBLIC_READS="true",
                      POLARSVC_READ_ONLY="yes")
    assert code == 0 and app.state.settings.read_only


def test_read_only(serve, tokens):
    code, app = serve(POLARSVC_READ_ONLY="1")
    assert code == 0 and app.state.settings.read_only
    with TestClient(app) as client:
        answer = upload(client, tokens.header("admin"))
        assert answer.status_code == 403 and "read-only" in answer.text
        assert client.get("/api/v1/families", headers=tokens.header("reader")).status_code == 200


def test_approved_only(serve, tokens, demo_factory):
    code, app = serve(POLARSVC_APPROVED_ONLY="on")
    assert code == 0 and app.state.settings.approved_only
    with TestClient(app) as client:
        reader = tokens.header("reader")
        params = {"thickness": 0.25, "reynolds": 4e6}
        refused = client.get("/api/v1/families/skua/blend", params=params, headers=reader)
        assert refused.status_code == 422  # nothing approved yet
        explicit = client.get("/api/v1/families/skua/blend",
                              params={**params, "approved_only": False}, headers=reader)
        assert explicit.status_code == 200


def test_max_upload_bytes(serve, tokens):
    code, app = serve(POLARSVC_MAX_UPLOAD_BYTES="200")
    assert code == 0 and app.state.settings.max_upload_bytes == 200
    with TestClient(app) as client:
        assert upload(client, tokens.header("curator")).status_code == 413


def test_flags_still_win_over_an_unset_environment(serve, tokens):
    code, app = serve("--read-only", "--public-reads", "--approved-only")
    settings = app.state.settings
    assert code == 0 and settings.read_only and settings.public_reads and settings.approved_only


@pytest.mark.parametrize(
    ("variable", "value"),
    [("POLARSVC_READ_ONLY", "maybe"), ("POLARSVC_PUBLIC_READS", "2"),
     ("POLARSVC_APPROVED_ONLY", "yes please"), ("POLARSVC_MAX_UPLOAD_BYTES", "5MB"),
     ("POLARSVC_MAX_UPLOAD_BYTES", "0")],
)
def test_a_bad_value_is_refused_naming_the_variable(serve, capsys, variable, value):
    code, app = serve(**{variable: value})
    assert code == 1 and app is None
    assert variable in capsys.readouterr().err


def test_every_environment_variable_is_in_the_settings_table():
    source = "\n".join(p.read_text() for p in (REPO / "polarsvc").rglob("*.py"))
    used = set(re.findall(r"\"(POLARSVC_[A-Z_]+)\"", source))
    guide = (REPO / "DEVELOPERS.md").read_text()
    table = guide[guide.index("## Settings"):]
    table = table[:table.index("\n## ", 3)] if "\n## " in table[3:] else table
    documented = set(re.findall(r"^\| `(POLARSVC_[A-Z_]+)` \|", table, flags=re.M))
    assert set(SETTING_VARIABLES) <= used
    assert used - {"POLARSVC_TEST_POSTGRES_URL"} <= documented, used - documented


def test_a_real_server_process_reads_read_only_and_public_reads(tmp_path, prepared_db):
    env = {"POLARSVC_DATABASE_URL": prepared_db[0], "POLARSVC_READ_ONLY": "1",
           "POLARSVC_PUBLIC_READS": "1"}
    tokens = make_tokens(prepared_db[1])
    with running_server([], cwd=tmp_path, env=env) as server:
        assert httpx.get(server.base + "/api/v1/families").status_code == 200
        answer = httpx.post(server.base + "/api/v1/polars", content=CSV,
                            headers={**tokens.header("admin"), "Content-Type": "text/csv"})
        assert answer.status_code == 403
