"""The real thing: `polarsvc serve --demo` as a separate process on a loopback port, used by
the Python client and plain HTTP."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import httpx
import numpy as np
import pytest

from polarsvc.client import PolarClient, RequestRefused
from polarsvc.package import read_station_package
from tests.demo_server import clean_environment, running_demo_server

REPO = Path(__file__).resolve().parents[2]


@pytest.fixture(scope="module")
def demo_server(tmp_path_factory):
    with running_demo_server(tmp_path_factory.mktemp("server")) as server:
        yield server.base, server.admin_token, server.workdir


def test_demo_server_serves_blade_sets_to_the_client(demo_server):
    base, admin_token, _ = demo_server
    with PolarClient(base) as client:  # public reads are on in the demo
        blade = client.blade_set("skerry-48")
        assert blade.cl.shape == (20, 721)
        assert blade.alpha_deg[0] == -180.0 and blade.alpha_deg[-1] == 180.0
        # the dynamic-stall inputs come with the blade set
        assert blade.f_separation.shape == blade.cl_fs.shape == (20, 721)
        assert len(blade.dynamic_stall) == 20
        assert blade.dynamic_stall[0]["stall_onset_deg"] is None  # the cylinder root
        assert 0.0 < blade.dynamic_stall[10]["stall_onset_deg"] < 30.0
        again = client.blade_set("skerry-48")
        np.testing.assert_array_equal(again.cd, blade.cd)
        assert again.content_hash == blade.content_hash
        station = blade.to_polar(station=10)
        assert station.covers_full_range
        tree = client.lineage(blade.content_hash)
        assert len(tree["inputs"]) == 21
        assert client.verify(blade.content_hash)["matches"] is True
        with pytest.raises(RequestRefused):
            client.blend("skua", thickness=0.25, reynolds=1e9)
    with PolarClient(base, token=admin_token) as admin:
        summary = admin.polars(airfoil="SKUA-250", surface="clean")[0]
        reviewed = admin.review(summary["content_hash"], state="approved")
        assert reviewed["review"]["state"] == "approved"


def test_tokens_never_reach_the_log(demo_server):
    base, admin_token, workdir = demo_server
    httpx.get(base + "/api/v1/tokens", headers={"Authorization": f"Bearer {admin_token}"})
    refused = httpx.get(base + "/api/v1/tokens",
                        headers={"Authorization": f"Bearer {admin_token}x"})
    assert refused.status_code == 401 and admin_token not in refused.text
    log = (workdir / "server.log").read_text()
    assert log.count(admin_token) == 1  # printed once at start-up, by design


def test_demo_server_refuses_writes_without_a_token(demo_server):
    base, _, _ = demo_server
    answer = httpx.post(base + "/api/v1/polars", content=b"alpha_deg,cl,cd\n",
                        headers={"Content-Type": "text/csv"})
    assert answer.status_code == 401


def test_cli_fetch_writes_a_blade_set_file(demo_server, tmp_path):
    base, _, _ = demo_server
    output = tmp_path / "skerry-48.csv"
    result = subprocess.run(
        [sys.executable, "-m", "polarsvc.cli", "fetch", "blade", "skerry-48", "--server", base,
         "--format", "csv", "-o", str(output)],
        capture_output=True, text=True, timeout=60,
    )
    assert result.returncode == 0, result.stderr
    lines = output.read_text().splitlines()
    assert lines[0].startswith("# ")
    data = [x for x in lines if not x.startswith("#")]
    assert data[0] == "radius_m,alpha_deg,cl,cd,cm,f_separation,cl_fs"
    assert len(data) == 1 + 20 * 721


def run_cli(*arguments: str, cwd: Path, timeout: float = 120) -> subprocess.CompletedProcess:
    """The command line as a user runs it: in the server's folder, no database named."""
    return subprocess.run(
        [sys.executable, "-m", "polarsvc.cli", *arguments], cwd=cwd, env=clean_environment(),
        capture_output=True, text=True, timeout=timeout,
    )


def test_cli_review_in_the_server_folder_acts_on_the_served_database(demo_server):
    base, _, workdir = demo_server
    listing = httpx.get(base + "/api/v1/polars",
                        params={"airfoil": "SKUA-350", "surface": "rough"}).json()
    revision = listing[0]["content_hash"]
    result = run_cli("review", "deprecate", revision, "--reason", "kept for the record",
                     cwd=workdir)
    assert result.returncode == 0, result.stderr
    assert f"{revision}: deprecated" in result.stdout
    answer = httpx.get(base + f"/api/v1/polars/{revision}").json()
    assert answer["review"]["state"] == "deprecated"
    assert not (workdir / "polarsvc-data" / "polarsvc.db").exists()


def test_a_second_server_on_a_busy_port_fails_before_printing_a_token(demo_server):
    base, _, workdir = demo_server
    port = base.rsplit(":", 1)[1]
    result = run_cli("serve", "--demo", "--port", port, cwd=workdir, timeout=60)
    assert result.returncode == 3
    assert f"127.0.0.1:{port}" in result.stderr and "in use" in result.stderr
    assert "token" not in result.stderr and "http://" not in result.stderr


def test_client_gets_rotor_performance_as_arrays(demo_server):
    base, admin_token, _ = demo_server
    # with a token: anonymous results are computed without being stored, and lineage and
    # verify need the stored result
    with PolarClient(base, token=admin_token) as client:
        result = client.performance("skerry-48")
        # the default grid: tip speed ratio 1..15 step 0.5 x pitch -5..30 step 5
        assert result["cp"].shape == (29, 8)
        assert result["normal_force_n_per_m"].shape[1] == 20
        assert result.rated_wind_speed_m_s is not None
        assert set(result.annual_energy) >= {"IEC class I: Rayleigh, mean 10 m/s"}
        assert "screening check" in result.meta["rotor_caution"]
        assert client.verify(result.content_hash)["matches"] is True
        tree = client.lineage(result.content_hash)
        assert tree["blade_set"]["recipe_hash"] == result.meta["blade_set_recipe_hash"]
        comparison = client.compare_performance(
            {"blade": "skerry-48"}, {"blade": "skerry-48", "rotor": {"tip_loss": False}}
        )
        assert comparison["a"]["content_hash"] == result.content_hash
        assert isinstance(comparison["power_curve"]["delta_w"], np.ndarray)
        assert [d["parameter"] for d in comparison["differences"]["parameters"]] == [
            "rotor.tip_loss"
        ]


def test_cli_fetches_the_station_package_from_the_server_of_its_folder(demo_server, tmp_path):
    base, _, workdir = demo_server
    target = tmp_path / "skerry-48.zip"
    result = run_cli("fetch", "package", "skerry-48", "-o", str(target), cwd=workdir)
    assert result.returncode == 0, result.stderr
    package = read_station_package(target)
    served = httpx.get(base + "/api/v1/blades/skerry-48/tables").json()
    assert package.content_hash == served["content_hash"]
    np.testing.assert_array_equal(package.columns["cd"], np.array(served["cd"]))
