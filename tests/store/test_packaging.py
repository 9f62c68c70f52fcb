"""The migrations ship inside the package: they run from a plain (non-editable) build."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import sqlalchemy

ROOT = Path(__file__).resolve().parents[2]


def test_migrations_run_from_a_built_package(tmp_path: Path) -> None:
    source = tmp_path / "src"
    source.mkdir()
    shutil.copy(ROOT / "pyproject.toml", source)
    for folder in ("polarsvc", "migrations"):
        shutil.copytree(
            ROOT / folder, source / folder, ignore=shutil.ignore_patterns("__pycache__")
        )
    build = tmp_path / "lib"
    subprocess.run(
        [
            sys.executable,
            "-c",
            "from setuptools import setup; setup()",
            "-q",
            "build_py",
            "--build-lib",
            str(build),
        ],
        cwd=source,
        check=True,
        capture_output=True,
    )
    assert (build / "polarsvc" / "migrations" / "versions" / "0001_initial.py").is_file()
    site_packages = str(Path(sqlalchemy.__file__).resolve().parents[1])
    script = (
        "import sys; sys.path[:0] = [sys.argv[1]]; sys.path.append(sys.argv[2])\n"
        "import polarsvc.migrations as m\n"
        "assert m.__file__.startswith(sys.argv[1]), m.__file__\n"
        "from polarsvc.store.db import make_engine, upgrade_database\n"
        "from sqlalchemy import inspect\n"
        "engine = make_engine('sqlite:///' + sys.argv[3])\n"
        "upgrade_database(engine)\n"
        "print(len(inspect(engine).get_table_names()))\n"
    )
    # -S: no site processing, so the editable install of the checkout is out of sight
    result = subprocess.run(
        [
            sys.executable,
            "-S",
            "-c",
            script,
            str(build),
            site_packages,
            str(tmp_path / "packaged.db"),
        ],
        cwd=tmp_path,
        check=True,
        capture_output=True,
        text=True,
    )
    from polarsvc.store.models import Base

    # every table of the models, and alembic's own
    assert result.stdout.strip() == str(len(Base.metadata.tables) + 1)
