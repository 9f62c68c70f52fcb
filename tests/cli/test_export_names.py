"""`polarsvc export` builds file names from a safe form of the airfoil name and never
writes outside its destination, also for odd names stored before names had a grammar
(rows written here straight through the ORM, as an older version could have)."""

from __future__ import annotations

from pathlib import Path

from polarsvc.cli import main
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import SYSTEM_ACTOR
from polarsvc.store.db import make_engine, make_session_factory, session_scope, upgrade_database
from polarsvc.store.models import Airfoil

from ..store.conftest import SYNTHETIC, small_polar

ODD_NAMES = ("../../escaped", "/tmp/polarsvc-absolute-{token}", "dir/sub", "..", ".hidden",
             "-rf", "tab\there", "C:\\x", "x" * 190)


def legacy_database(url: str, token: str) -> list[str]:
    engine = make_engine(url)
    upgrade_database(engine)
    names = [name.format(token=token) for name in ODD_NAMES]
    try:
        factory = make_session_factory(engine)
        with session_scope(factory, write=True) as session:
            for index, name in enumerate(names):
                session.add(Airfoil(name=name, thickness=0.21, description=""))
                session.flush()
                polar_store.store_polar(
                    session, airfoil_name=name, polar=small_polar(index * 0.01),
                    provenance=SYNTHETIC, actor=SYSTEM_ACTOR,
                )
    finally:
        engine.dispose()
    return names


def all_files(root: Path) -> set[Path]:
    return {p for p in root.rglob("*") if p.is_file()}


def test_export_of_odd_names_stays_inside_the_destination(database_url, tmp_path, capsys):
    names = legacy_database(database_url, tmp_path.name)
    work = tmp_path / "a" / "b"
    destination = work / "dest"
    destination.mkdir(parents=True)
    for fmt in ("csv", "json"):
        before = all_files(tmp_path)
        code = main(["--database-url", database_url, "export", str(destination),
                     "--format", fmt])
        assert code == 0, capsys.readouterr().err
        written = all_files(tmp_path) - before
        assert len(written) == len(names)
        assert all(path.parent == destination for path in written), written
        assert list(Path("/tmp").glob(f"polarsvc-absolute-{tmp_path.name}*")) == []
        assert not (tmp_path / "a" / "escaped").exists()
        texts = "".join(path.read_text() for path in written)
        for name in names:  # the real name is kept inside the file
            shown = name.replace("\\", "\\\\").replace("\t", "\\t") if fmt == "json" else name
            assert shown in texts
    capsys.readouterr()


def test_a_bundle_of_odd_names_is_written_inside_its_folder_and_refused_on_import(
    database_url, tmp_path, capsys
):
    legacy_database(database_url, tmp_path.name)
    bundle = tmp_path / "work" / "bundle"
    assert main(["--database-url", database_url, "bundle", "export", str(bundle)]) == 0
    written = {p for p in tmp_path.rglob("*") if p.is_file()}
    assert all(bundle in p.parents for p in written if "bundle" in p.parts)
    assert list(Path("/tmp").glob(f"polarsvc-absolute-{tmp_path.name}*")) == []
    capsys.readouterr()
    target = f"sqlite:///{tmp_path / 'target.db'}"
    assert main(["--database-url", target, "bundle", "import", str(bundle)]) == 1
    err = capsys.readouterr().err
    assert "not a valid name" in err and "name" in err


def test_the_command_line_refuses_bad_names_naming_the_field(database_url, tmp_path, capsys):
    for name in ("dir/sub", "../x", "a\tb"):
        code = main(["--database-url", database_url, "token", "create", name,
                     "--role", "reader"])
        assert code == 1 and "field 'name'" in capsys.readouterr().err
    table = tmp_path / "t.csv"
    table.write_text("alpha_deg,cl,cd\n0,0.1,0.01\n5,0.6,0.012\n")
    code = main(["--database-url", database_url, "import", str(table), "--airfoil", "../x",
                 "--thickness", "0.2", "--source-kind", "synthetic"])
    out = capsys.readouterr()
    assert code == 1 and "field 'airfoil'" in out.out
