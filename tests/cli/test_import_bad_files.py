"""`polarsvc import` over a folder goes on past a bad file: every file gets its line, the
good ones are stored, and the exit code is non-zero at the end."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

from polarsvc.cli import main

from .test_cli import SEED, hashes

HUGE = int("1" + "0" * 399)  # 400 digits: beyond the largest double (IEEE 754, ~1.8e308)


def bad_json(path: Path, key: str) -> None:
    document = {
        "airfoil": "SKUA-210", "family": "skua",
        "conditions": {"thickness": 0.21, "reynolds": 3e6, "mach": 0.0},
        "provenance": {"source_kind": "synthetic"},
        "table": {"alpha_deg": [0, 5], "cl": [0.1, 0.6], "cd": [0.01, 0.012]},
    }
    document["conditions"][key] = HUGE
    path.write_text(json.dumps(document))


def test_import_continues_past_bad_files_and_fails_at_the_end(database_url, tmp_path, capsys):
    folder = tmp_path / "incoming"
    folder.mkdir()
    good = sorted(SEED.glob("SKUA-2*_clean.csv"))[:2]
    shutil.copy(good[0], folder / "a_good.csv")
    bad_json(folder / "b_reynolds.json", "reynolds")
    bad_json(folder / "c_mach.json", "mach")
    (folder / "d_name.csv").write_text(good[1].read_text().replace(
        "# airfoil: SKUA-", "# airfoil: ../../SKUA-", 1))
    shutil.copy(good[1], folder / "e_good.csv")
    code = main(["--database-url", database_url, "import", "--create-families", str(folder)])
    out = capsys.readouterr()
    assert code == 1
    assert "[1/5]" in out.out and "a_good.csv: stored" in out.out
    assert "b_reynolds.json: refused" in out.out and "conditions.reynolds" in out.out
    assert "c_mach.json: refused" in out.out and "conditions.mach" in out.out
    assert "d_name.csv: refused" in out.out and "field 'airfoil'" in out.out
    assert "[5/5]" in out.out and "e_good.csv: stored" in out.out
    assert "5 files: 2 stored, 0 identical, 3 refused" in out.err
    assert len(hashes(database_url)) == 2
