"""`polarsvc serve`: the demo database persists across restarts unless ``--fresh``; the local
commands find the database the server uses; a busy port is refused before anything else is
printed or prepared. The server itself is replaced by a recorder (the real process is
exercised in ``tests/api/test_server_process.py``)."""

from __future__ import annotations

import json
import socket
from pathlib import Path

import pytest
import uvicorn
from sqlalchemy import select

from polarsvc.cli import EXIT_CANNOT_SERVE, main
from polarsvc.store.db import make_engine, make_session_factory, session_scope
from polarsvc.store.models import PolarRevision

REPO = Path(__file__).resolve().parents[2]

EXTRA_POLAR = """# airfoil: LOCAL-TEST-210
# thickness: 0.21
# reynolds: 3000000
# source_kind: wind-tunnel
# reference: local test table
alpha_deg,cl,cd,cm
-6,-0.45,0.0110,-0.050
-4,-0.23,0.0095,-0.055
-2,-0.01,0.0088,-0.060
0,0.21,0.0086,-0.065
2,0.43,0.0089,-0.068
4,0.65,0.0096,-0.070
6,0.86,0.0108,-0.071
8,1.05,0.0128,-0.070
10,1.20,0.0160,-0.066
12,1.29,0.0220,-0.060
14,1.30,0.0330,-0.058
16,1.24,0.0510,-0.062
"""


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@pytest.fixture
def workdir(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A fresh working folder, no database named in the environment, and the HTTP server
    replaced by a recorder of what it would have served."""
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("POLARSVC_DATABASE_URL", raising=False)
    monkeypatch.delenv("POLARSVC_SERVER", raising=False)
    served: list[object] = []
    monkeypatch.setattr(uvicorn, "run", lambda app, **kw: served.append(kw))
    monkeypatch.setattr(uvicorn.Server, "run", lambda self, sockets=None: served.append(sockets))
    return tmp_path


def revision_hashes(url: str) -> set[str]:
    engine = make_engine(url)
    try:
        with session_scope(make_session_factory(engine), write=False) as session:
            return set(session.scalars(select(PolarRevision.content_hash)).all())
    finally:
        engine.dispose()


def demo_url(workdir: Path) -> str:
    return f"sqlite:///{(workdir / 'polarsvc-data' / 'demo.db').resolve()}"


def test_demo_database_persists_across_restarts_unless_fresh(workdir, capsys):
    port = str(free_port())
    assert main(["serve", "--demo", "--port", port]) == 0
    demo = revision_hashes(demo_url(workdir))
    assert len(demo) == len(list((REPO / "seed_polars" / "skua").glob("*.csv")))
    (workdir / "extra.csv").write_text(EXTRA_POLAR)
    # the local command, given no database, stores into the database the demo serves
    assert main(["import", "extra.csv"]) == 0
    assert len(revision_hashes(demo_url(workdir))) == len(demo) + 1

    capsys.readouterr()
    assert main(["serve", "--demo", "--port", port]) == 0
    err = capsys.readouterr().err
    assert len(revision_hashes(demo_url(workdir))) == len(demo) + 1  # kept on restart
    assert "kept" in err and "--fresh" in err

    assert main(["serve", "--demo", "--fresh", "--port", port]) == 0
    assert revision_hashes(demo_url(workdir)) == demo  # anew with --fresh


def test_review_from_the_cli_finds_the_demo_database(workdir, capsys):
    assert main(["serve", "--demo", "--port", str(free_port())]) == 0
    record = json.loads((workdir / "polarsvc-data" / "serving.json").read_text())
    assert record["database_url"] == demo_url(workdir)
    revision = sorted(revision_hashes(demo_url(workdir)))[0]
    capsys.readouterr()
    assert main(["review", "deprecate", revision, "--reason", "checked by hand"]) == 0
    out, err = capsys.readouterr()
    assert f"{revision}: deprecated" in out
    assert demo_url(workdir) in err  # says which database it used and why
    assert not (workdir / "polarsvc-data" / "polarsvc.db").exists()


def test_busy_port_is_refused_before_anything_is_printed(workdir, capsys):
    with socket.socket() as busy:
        busy.bind(("127.0.0.1", 0))
        busy.listen()
        port = busy.getsockname()[1]
        code = main(["serve", "--demo", "--port", str(port)])
    err = capsys.readouterr().err
    assert code == EXIT_CANNOT_SERVE
    assert f"127.0.0.1:{port}" in err and "in use" in err and "--port" in err
    assert "token" not in err and "http://" not in err
    assert not (workdir / "polarsvc-data").exists()  # nothing prepared either


def test_unresolvable_host_is_refused_with_its_name(workdir, capsys):
    assert main(["serve", "--host", "no-such-host.invalid", "--port", "8000"]) == (
        EXIT_CANNOT_SERVE
    )
    assert "no-such-host.invalid" in capsys.readouterr().err
