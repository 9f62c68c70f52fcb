"""schemathesis with every check (``--checks all``) over every operation of the OpenAPI
document, against a live ``polarsvc serve --demo`` process on SQLite and on PostgreSQL:
no server errors, answers that match the document, schema-valid requests accepted and
schema-invalid ones refused (tests/api/schemathesis.toml says where a rule the schema cannot
state allows a 422).

The same requests every run: deterministic generation (``--generation-deterministic``,
hypothesis derandomised, no example database), 5 examples per operation in the fuzzing
phase, the coverage phase's enumeration bounded in tests/api/schemathesis.toml, and no
``--max-time``: with a time budget schemathesis cuts the coverage phase short and repeats
fuzzing and stateful sequences until the budget is spent, so what is sent (and found)
would depend on the machine's speed. The time is bounded by the fixed set of cases;
HANG_SECONDS only stops a run that hangs. One worker: with several, hypothesis's shared
caches race inside the schemathesis process and report internal errors.

The figures of the last run (operations, test cases, failures, seconds) are printed and
recorded in DEVELOPERS.md.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest

from tests.serverproc import start_server

pytest.importorskip("schemathesis")

CONFIG = Path(__file__).with_name("schemathesis.toml")
MAX_EXAMPLES = 5
HANG_SECONDS = 600


def _schemathesis() -> list[str]:
    found = shutil.which("st", path=str(Path(sys.executable).parent))
    return [found] if found else [sys.executable, "-m", "schemathesis.cli"]


def test_every_operation_passes_every_check(database_url, tmp_path):
    server = start_server(["--database-url", database_url, "--demo"], cwd=tmp_path, timeout_s=120)
    try:
        headers = {"Authorization": f"Bearer {server.token}"}
        revision = httpx.get(f"{server.base}/api/v1/polars", params={"airfoil": "SKUA-250"},
                             headers=headers).json()[0]["content_hash"]
        table = httpx.get(f"{server.base}/api/v1/blades/skerry-48/tables",
                          params={"format": "bin"}, headers=headers)
        derived = table.headers["X-Polarsvc-Content-Hash"]
        started = time.monotonic()
        run = subprocess.run(
            [*_schemathesis(), "--config-file", str(CONFIG), "run",
             f"{server.base}/api/v1/openapi.json", "--checks", "all",
             "-H", f"Authorization: Bearer {server.token}",
             "--max-examples", str(MAX_EXAMPLES),
             "--generation-deterministic", "--workers", "1",
             "--no-color", "--request-timeout", "30"],
            capture_output=True, text=True, timeout=HANG_SECONDS, cwd=tmp_path,
            env={**os.environ, "POLARSVC_FUZZ_REVISION": revision,
                 "POLARSVC_FUZZ_DERIVED": derived},
        )
        elapsed = time.monotonic() - started
    finally:
        server.stop()
    output = run.stdout + run.stderr
    tested = re.search(r"Tested: (\d+)", output)
    cases = re.search(r"(\d+) generated", output)
    print(f"schemathesis on {database_url.split(':')[0]}: "
          f"{tested.group(1) if tested else '?'} operations, "
          f"{cases.group(1) if cases else '?'} test cases, exit {run.returncode}, "
          f"{elapsed:.0f} s")
    print("\n".join(line.strip() for line in output.splitlines()
                    if re.search(r"\(in [\d.]+s\)|Scenarios:|API Links:", line)))
    assert run.returncode == 0, output[-20000:]
    assert tested and int(tested.group(1)) >= 35, output[-4000:]
    assert "Server error" not in output and "Response violates schema" not in output
