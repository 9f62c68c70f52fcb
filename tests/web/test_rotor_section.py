"""The rotor section of the blade page: facts, caution, plots and the CSV behind them,
agreeing with the API's rotor result.

Outside references: HTML through :mod:`html`, SVG through :mod:`xml.etree.ElementTree`,
CSV through :mod:`csv` (standard library)."""

from __future__ import annotations

import csv
import html
import io
import re
import xml.etree.ElementTree as ET

import numpy as np

from tests.web.conftest import Demo


def test_blade_page_rotor_section(demo: Demo):
    headers = demo.bearer("reader")
    page = demo.client.get("/blades/skerry-48?compare=rotation-none", headers=headers)
    assert page.status_code == 200
    text = html.unescape(page.text)
    assert "Rotor performance" in text and "screening check" in text
    assert "IEC class I: Rayleigh, mean 10 m/s" in text
    assert "without rotational augmentation" in text
    result = demo.client.get("/api/v1/blades/skerry-48/performance", params={"clamp": True},
                             headers=headers).json()
    assert result["recipe_hash"] in text
    plots = [html.unescape(u) for u in re.findall(r'src="(/plots/blades/[^"]*rotor-[^"]*)"',
                                                  page.text)]
    kinds = {re.search(r"rotor-([a-z-]+)\.svg", u).group(1) for u in plots}
    assert kinds == {"cp-lambda", "power", "loads", "delta-cp", "delta-power"}
    for url in plots:
        answer = demo.client.get(url, headers=headers)
        assert answer.status_code == 200
        assert answer.headers["content-type"].startswith("image/svg+xml")
        ET.fromstring(answer.content)  # well-formed SVG
    power = demo.client.get(
        next(u for u in plots if "rotor-power" in u).replace(".svg", ".csv"), headers=headers
    )
    rows = list(csv.reader(io.StringIO(power.text)))
    assert rows[0][0] == "wind_speed_m_s"
    speeds = np.array([float(r[0]) for r in rows[1:]])
    stored = np.array([float(r[1]) for r in rows[1:]])
    np.testing.assert_array_equal(speeds, result["wind_speed_m_s"])
    np.testing.assert_allclose(stored * 1e3, result["power_w"], rtol=1e-15)


def test_loads_at_a_chosen_wind_speed(demo: Demo):
    headers = demo.bearer("reader")
    result = demo.client.get("/api/v1/blades/skerry-48/performance", params={"clamp": True},
                             headers=headers).json()
    row = result["wind_speed_m_s"].index(15.0)
    answer = demo.client.get("/plots/blades/skerry-48/rotor-loads.csv?loads_at=15",
                             headers=headers)
    rows = list(csv.reader(io.StringIO(answer.text)))
    assert rows[0] == ["radius_m", "normal [kN/m]", "tangential [kN/m]"]
    normal = np.array([float(r[1]) for r in rows[1:]]) * 1e3
    np.testing.assert_allclose(normal, result["normal_force_n_per_m"][row], rtol=1e-15)
    assert demo.client.get("/plots/blades/skerry-48/rotor-delta-cp.svg",
                           headers=headers).status_code == 404
    page = demo.client.get("/blades/skerry-48?compare=bogus&loads_at=x", headers=headers)
    assert page.status_code == 200
    assert "is not known" in html.unescape(page.text)
