"""The README cannot drift: every shell and Python snippet in it runs here, in order, against
a real `polarsvc serve --demo` process started in a fresh folder (the snippets' address
http://127.0.0.1:8000 replaced by the server's, ``TOKEN`` set to the admin token it printed,
the command-line tools run in the server's folder as a user would).

The two set-up commands (a venv, then serving the demo or running this suite) are the only
blocks not run here: continuous integration runs the test command verbatim
(``tests/cli/test_cli.py`` checks it is the same), and the server used here is started by
the same ``polarsvc serve --demo``. Usage synopses belong in ``text`` blocks.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

from tests.demo_server import DemoServer, clean_environment, running_demo_server

README = Path(__file__).resolve().parents[1] / "README.md"
FENCE = re.compile(r"^```(\w*)[ \t]*\n(.*?)^```", re.MULTILINE | re.DOTALL)
SHELL_LANGUAGES = ("sh", "bash", "shell")
SET_UP_MARK = "python3 -m venv .venv"
README_ADDRESS = "http://127.0.0.1:8000"

SHELL_PRELUDE = """set -euo pipefail
# an HTTP error answer fails the snippet (the README's curl -s alone would not)
curl() { command curl --show-error --fail-with-body "$@"; }
"""


def blocks(*languages: str) -> list[str]:
    """The README's fenced blocks in these languages, in order, set-up commands left out."""
    found = [body for language, body in FENCE.findall(README.read_text(encoding="utf-8"))
             if language in languages]
    return [body for body in found if SET_UP_MARK not in body]


def localised(text: str, server: DemoServer) -> str:
    return text.replace(README_ADDRESS, server.base)


@pytest.fixture(scope="module")
def server(tmp_path_factory: pytest.TempPathFactory):
    with running_demo_server(tmp_path_factory.mktemp("readme")) as running:
        yield running


def test_only_the_two_set_up_commands_are_left_out():
    every = [body for language, body in FENCE.findall(README.read_text(encoding="utf-8"))
             if language in SHELL_LANGUAGES]
    set_up = [body for body in every if SET_UP_MARK in body]
    assert len(set_up) == 2
    assert set_up[0].strip().endswith("polarsvc serve --demo")
    assert set_up[1].strip().endswith("python -m pytest -q")
    assert blocks(*SHELL_LANGUAGES) and blocks("python")


def test_shell_snippets_run_against_the_demo_server(server):
    parts = [SHELL_PRELUDE]
    for number, body in enumerate(blocks(*SHELL_LANGUAGES), start=1):
        parts.append(f'echo "== README shell snippet {number}" >&2\n')
        parts.append(localised(body, server) + "\n")
    env = clean_environment()
    env["PATH"] = f"{Path(sys.executable).parent}:{env.get('PATH', '')}"
    env["TOKEN"] = server.admin_token
    result = subprocess.run(
        ["bash", "-c", "".join(parts)], cwd=server.workdir, env=env,
        capture_output=True, text=True, timeout=300,
    )
    assert result.returncode == 0, (
        f"a README shell snippet failed (exit {result.returncode}):\n{result.stderr[-3000:]}"
        f"\n--- standard output (end):\n{result.stdout[-1500:]}"
    )


def test_python_snippets_run_against_the_demo_server(server, monkeypatch):
    monkeypatch.chdir(server.workdir)
    monkeypatch.setenv("TOKEN", server.admin_token)
    namespace: dict[str, object] = {"__name__": "__readme__"}
    for number, body in enumerate(blocks("python"), start=1):
        code = compile(localised(body, server), f"<README.md python snippet {number}>", "exec")
        exec(code, namespace)  # the README's own snippets
