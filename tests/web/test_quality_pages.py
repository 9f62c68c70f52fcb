"""Quality flags show on the airfoil page (list of revisions and the selected revision)."""

from __future__ import annotations

from pathlib import Path

CORPUS = Path(__file__).resolve().parents[1] / "quality_corpus"


def test_flags_show_on_the_airfoil_page(demo):
    body = (CORPUS / "mach_missing.csv").read_bytes()
    answer = demo.client.post("/api/v1/polars", content=body, headers={
        **demo.bearer("curator"), "Content-Type": "text/csv"})
    assert answer.status_code == 201, answer.text
    page = demo.client.get("/airfoils/SKUA-Q-NOMACH", headers=demo.bearer("reader"))
    assert page.status_code == 200
    assert "warning: mach-not-stated" in page.text
    assert "no Mach number stated; stored as 0 (incompressible)" in page.text
    clean = demo.client.get("/airfoils/SKUA-210", headers=demo.bearer("reader"))
    assert "no flags" in clean.text
