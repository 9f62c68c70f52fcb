"""The curation pages on the demo data: reading, escaping, sign-in, CSRF, review forms,
plot and CSV downloads.

Outside references: HTML is checked with the standard library's parser
(:class:`html.parser.HTMLParser`), SVG with :mod:`xml.etree.ElementTree`, CSV with :mod:`csv`.
The demo tables are invented (seed_polars/generate.py, "demo model v1"); the characteristic
values checked against that model's stated formulas are labelled as such.
"""

from __future__ import annotations

import csv
import html
import io
import math
import re
import xml.etree.ElementTree as ET
from html.parser import HTMLParser
from urllib.parse import quote

import numpy as np
import pytest
from sqlalchemy import select

from polarsvc.aero import Polar
from polarsvc.api.deps import SESSION_COOKIE
from polarsvc.store import airfoils as airfoil_store
from polarsvc.store import polars as polar_store
from polarsvc.store.audit import SYSTEM_ACTOR, query_events
from polarsvc.store.db import session_scope
from polarsvc.store.models import Airfoil, DerivedTable
from tests.web.conftest import Demo, csrf_from

PAGES = (
    "/",
    "/?q=210",
    "/?family=skua&surface=rough&review_state=draft&source_kind=synthetic",
    "/airfoils/SKUA-210",
    "/airfoils/SKUA-CYL",
    "/airfoils/SKUA-210?r_over_R=0.2&chord_over_r=0.3&tip_speed_ratio=7&twist_deg=5"
    "&model=chaviaropoulos-hansen",
    "/airfoils/SKUA-400?model=du-selig",
    "/families/skua",
    "/families/skua?thickness=0.33&reynolds=4e6&surface=rough",
    "/blades/skerry-48",
    "/blades/skerry-48?clamp=no",
    "/audit",
    "/audit?since=2000-01-01&until=2100-01-01T00:00&actor=system",
    "/sign-in",
)

CAUTION_WORDS = "design use follows IEC 61400-1"


class _Collector(HTMLParser):
    """Collects tags, links and image sources of a page (the HTML must parse)."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.links: list[str] = []
        self.images: list[str] = []
        self.attributes: set[str] = set()

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        values = dict(attrs)
        self.attributes.update(values)
        if tag == "a" and values.get("href"):
            self.links.append(values["href"])
        if tag == "img" and values.get("src"):
            self.images.append(values["src"])


def parse(html: str) -> _Collector:
    collector = _Collector()
    collector.feed(html)
    collector.close()
    return collector


def svg_texts(body: bytes) -> list[str]:
    root = ET.fromstring(body)
    return ["".join(e.itertext()) for e in root.iter("{http://www.w3.org/2000/svg}text")]


@pytest.mark.parametrize("url", PAGES)
def test_every_page_answers_with_the_caution_footer(demo: Demo, url: str):
    answer = demo.client.get(url, headers=demo.bearer("reader"))
    assert answer.status_code == 200, answer.text[:500]
    assert answer.headers["content-type"].startswith("text/html")
    assert CAUTION_WORDS in answer.text
    assert "script-src" not in answer.headers["content-security-policy"]  # none allowed
    assert "<script" not in answer.text
    parse(answer.text)


def test_reading_without_a_token_sends_the_browser_to_sign_in(demo: Demo):
    answer = demo.client.get("/airfoils/SKUA-210?revision=abc", follow_redirects=False)
    assert answer.status_code == 303
    assert answer.headers["location"] == "/sign-in?next=" + quote(
        "/airfoils/SKUA-210?revision=abc", safe="/"
    )


def test_public_reads_need_no_token(demo_settings, demo_database):
    from dataclasses import replace

    from polarsvc.api.app import create_app
    from tests.web.conftest import TestClient

    app = create_app(replace(demo_settings, public_reads=True))
    with TestClient(app) as client:
        answer = client.get("/")
        assert answer.status_code == 200
        assert "anonymous" in answer.text


def test_the_catalogue_lists_the_demo_family_and_filters(demo: Demo):
    headers = demo.bearer("reader")
    page = demo.client.get("/", headers=headers).text
    # seed_polars/family.json: seven airfoils, SKUA-180 .. SKUA-CYL
    links = parse(page).links
    for name in ("SKUA-180", "SKUA-210", "SKUA-250", "SKUA-300", "SKUA-350", "SKUA-400",
                 "SKUA-CYL"):
        assert f"/airfoils/{name}" in links
    assert "/families/skua" in links
    assert "/blades/skerry-48" in links
    only = parse(demo.client.get("/?q=cyl", headers=headers).text).links
    assert [link for link in only if link.startswith("/airfoils/")] == ["/airfoils/SKUA-CYL"]
    none = demo.client.get("/?review_state=approved", headers=headers).text
    assert "No airfoil matches these filters." in none


def test_the_airfoil_page_shows_provenance_plots_and_characteristic_values(demo: Demo):
    page = demo.client.get("/airfoils/SKUA-210", headers=demo.bearer("reader")).text
    collected = parse(page)
    # the default revision is the first by Reynolds number among the clean ones
    assert f"Revision {_draft_hash(demo)[:12]} · " in page
    assert "· clean</h3>" in page
    assert "polarsvc demo model v1 (seed_polars/generate.py)" in page  # reference field
    kinds = {re.search(r"/(cl|cd|cm|cl-cd)\.svg", src).group(1) for src in collected.images}
    assert kinds == {"cl", "cd", "cm", "cl-cd"}
    # Demo model v1 (seed_polars/generate.py, invented data) states alpha0 = -2.0 - 2.5 x and
    # a lift slope 2 pi (1 - 0.10 x) per rad with x = (t - 0.18) / 0.22; at t/c 0.21:
    x = (0.21 - 0.18) / 0.22
    alpha0 = float(re.search(r"zero-lift angle α₀</th><td class=\"num\">([-0-9.]+) deg", page)
                   .group(1))
    slope = float(re.search(r"lift slope c_l,α</th><td class=\"num\">([-0-9.]+) /rad", page)
                  .group(1))
    assert alpha0 == pytest.approx(-2.0 - 2.5 * x, abs=0.1)
    assert slope == pytest.approx(2.0 * math.pi * (1.0 - 0.10 * x), rel=0.02)


def test_a_table_without_lift_says_so_instead_of_lift_values(demo: Demo):
    # SKUA-CYL holds cl = 0 everywhere (seed_polars/generate.py, invented demo data)
    page = demo.client.get("/airfoils/SKUA-CYL", headers=demo.bearer("reader")).text
    assert "carries no lift" in page
    assert "best lift-to-drag" not in page


def test_each_plot_is_a_labelled_svg_download_with_its_csv(demo: Demo):
    headers = demo.bearer("reader")
    page = demo.client.get("/airfoils/SKUA-210", headers=headers).text
    for src in parse(page).images:
        answer = demo.client.get(src, headers=headers)
        assert answer.status_code == 200
        assert answer.headers["content-type"] == "image/svg+xml"
        assert answer.headers["content-disposition"].startswith("inline; filename=")
        texts = svg_texts(answer.content)
        assert "angle of attack α [deg]" in texts or "drag coefficient c_d [-]" in texts
        table = demo.client.get(src.replace(".svg?", ".csv?"), headers=headers)
        assert table.status_code == 200
        assert table.headers["content-type"].startswith("text/csv")
        assert table.headers["content-disposition"].startswith("attachment; filename=")
        rows = list(csv.reader(io.StringIO(table.text)))
        assert rows[0] == ["series", "alpha_deg", "cl", "cd", "cm"]


def test_the_csv_holds_the_stored_rows_unchanged(demo: Demo):
    with session_scope(demo.app.state.session_factory, write=False) as session:
        revision = polar_store.list_revisions(session, airfoil="SKUA-250", surface="rough")[-1]
        stored = polar_store.load_polar(revision)
        key = revision.content_hash[:16]
    answer = demo.client.get(
        f"/plots/airfoils/SKUA-250/cl.csv?revision={key}&span=full", headers=demo.bearer("reader")
    )
    rows = [r for r in csv.reader(io.StringIO(answer.text)) if r[0] == "stored rows"]
    np.testing.assert_array_equal([float(r[1]) for r in rows], stored.alpha_deg)
    np.testing.assert_array_equal([float(r[2]) for r in rows], stored.cl)
    np.testing.assert_array_equal([float(r[3]) for r in rows], stored.cd)


@pytest.mark.parametrize(
    "url",
    [
        "/plots/families/skua/members-cl.svg",
        "/plots/families/skua/blend-cd.svg?thickness=0.3",
        "/plots/blades/skerry-48/planform.svg",
        "/plots/blades/skerry-48/stations-cl.svg?span=full",
        "/plots/blades/skerry-48/augmentation-cl.svg?span=near",
    ],
)
def test_family_and_blade_plots_are_svg_with_csv(demo: Demo, url: str):
    headers = demo.bearer("reader")
    answer = demo.client.get(url, headers=headers)
    assert answer.status_code == 200
    texts = svg_texts(answer.content)
    assert any("[deg]" in t or "[m]" in t for t in texts)
    table = demo.client.get(url.replace(".svg", ".csv"), headers=headers)
    assert table.status_code == 200
    assert len(list(csv.reader(io.StringIO(table.text)))) > 2


def test_the_blade_page_shows_the_augmentation_before_and_after(demo: Demo):
    headers = demo.bearer("reader")
    page = demo.client.get("/blades/skerry-48", headers=headers)
    assert page.status_code == 200
    assert "Rotational augmentation, before and after" in page.text
    images = parse(page.text).images
    assert any("/augmentation-cl.svg" in src for src in images)
    # the legend names both tables of each shown station (the innermost augmented ones;
    # seed_polars/skerry-48.json: the cylinder root from 1.6 to 3.4 m carries no lift)
    svg = demo.client.get("/plots/blades/skerry-48/augmentation-cl.svg", headers=headers)
    texts = svg_texts(svg.content)
    assert any("r 4.6 m, 2D" in t for t in texts)
    assert any("r 4.6 m, augmented" in t for t in texts)
    # the station table carries the fade and the dynamic-stall values, and the flags
    assert "stall onset [deg]" in page.text and "c/r outside calibration" in page.text
    table = demo.client.get("/plots/blades/skerry-48/dynamic-stall.csv", headers=headers)
    assert table.status_code == 200
    rows = [r for r in csv.reader(io.StringIO(table.text)) if not r[0].startswith("#")]
    assert rows[0] == ["radius_m", "alpha_deg", "f_separation", "cl_fs"]
    assert len(rows) == 1 + 20 * 721
    assert "# dynamic_stall_station_9: radius_m=17.0 alpha0_deg=" in table.text


def test_the_airfoil_page_states_the_fade(demo: Demo):
    page = demo.client.get("/airfoils/SKUA-400?r_over_R=0.2&chord_over_r=0.41",
                           headers=demo.bearer("reader"))
    assert page.status_code == 200
    assert "stall angle of the section" in page.text
    assert "before augmentation" in page.text
    assert "above the zero-lift angle" in page.text


def test_unknown_objects_and_kinds_answer_404_pages(demo: Demo):
    headers = demo.bearer("reader")
    for url in ("/airfoils/NO-SUCH", "/families/none", "/blades/none",
                "/plots/airfoils/SKUA-210/lift.svg", "/derived/" + "0" * 64 + "/lineage",
                "/airfoils/SKUA-210?revision=ffffffffffff"):
        answer = demo.client.get(url, headers=headers)
        assert answer.status_code == 404, url
        assert answer.headers["content-type"].startswith("text/html")


def _store_hostile_airfoil(demo: Demo) -> str:
    # a name outside today's grammar, as an older version could have stored it
    name = "<img src=x onerror=alert(1)>"
    with session_scope(demo.app.state.session_factory, write=True) as session:
        session.add(Airfoil(
            name=name, thickness=0.22, family=airfoil_store.get_family(session, "skua"),
            description="<script>alert('description')</script>",
        ))
        session.flush()
        polar_store.store_polar(
            session,
            airfoil_name=name,
            polar=Polar(alpha_deg=[-4.0, 0.0, 4.0, 8.0], cl=[-0.2, 0.25, 0.7, 1.1],
                        cd=[0.009, 0.008, 0.009, 0.012], reynolds=2e6),
            provenance={
                "source_kind": "cfd",
                "reference": "<script>alert('reference')</script>",
                "contributor": "\"><script>alert('contributor')</script>",
                "notes": "<script>alert('notes')</script>",
            },
            actor=SYSTEM_ACTOR,
        )
    return name


def test_user_supplied_text_is_escaped(demo: Demo):
    name = _store_hostile_airfoil(demo)
    headers = demo.bearer("reader")
    pages = [
        demo.client.get("/", headers=headers).text,
        demo.client.get(f"/airfoils/{quote(name, safe='')}", headers=headers).text,
        demo.client.get("/families/skua", headers=headers).text,
        demo.client.get("/audit", headers=headers).text,
    ]
    for page in pages:
        assert "<script" not in page
        assert "<img src=x" not in page
        collected = parse(page)
        assert "script" not in collected.tags
        assert "onerror" not in collected.attributes
    assert "&lt;script&gt;alert(&#39;notes&#39;)&lt;/script&gt;" in pages[1]
    assert "&lt;img src=x onerror=alert(1)&gt;" in pages[0]


def test_sign_in_keeps_the_secret_on_the_server(demo: Demo):
    demo.sign_in("curator")
    cookie = demo.client.cookies.get(SESSION_COOKIE)
    assert cookie and cookie != demo.secrets["curator"]
    page = demo.client.get("/airfoils/SKUA-210").text
    assert demo.secrets["curator"] not in page
    assert "demo-curator" in page


def test_the_session_cookie_is_http_only_and_strict(demo: Demo):
    form = demo.client.get("/sign-in")
    answer = demo.client.post(
        "/sign-in",
        data={"csrf_token": csrf_from(form.text), "token": demo.secrets["reader"], "next": "/"},
        follow_redirects=False,
    )
    header = next(
        v for k, v in answer.headers.multi_items()
        if k == "set-cookie" and v.startswith(SESSION_COOKIE + "=")
    )
    flags = {part.strip().lower() for part in header.split(";")}
    assert "httponly" in flags
    assert "samesite=strict" in flags
    assert "path=/" in flags
    assert demo.secrets["reader"] not in header


def test_a_bad_token_is_refused_at_sign_in(demo: Demo):
    form = demo.client.get("/sign-in")
    answer = demo.client.post(
        "/sign-in",
        data={"csrf_token": csrf_from(form.text), "token": "psv_not-a-token", "next": "/"},
        follow_redirects=False,
    )
    assert answer.status_code == 401
    assert "unknown, expired or revoked" in answer.text
    assert SESSION_COOKIE not in answer.headers.get("set-cookie", "")


def test_sign_in_without_its_csrf_token_is_forbidden(demo: Demo):
    demo.client.get("/sign-in")
    for data in ({"token": demo.secrets["reader"]},
                 {"token": demo.secrets["reader"], "csrf_token": "forged"}):
        answer = demo.client.post("/sign-in", data=data, follow_redirects=False)
        assert answer.status_code == 403


def test_sign_in_returns_only_to_a_local_page(demo: Demo):
    form = demo.client.get("/sign-in?next=//elsewhere.example/x")
    assert 'name="next" value="/"' in form.text
    answer = demo.client.post(
        "/sign-in",
        data={"csrf_token": csrf_from(form.text), "token": demo.secrets["reader"],
              "next": "https://elsewhere.example/"},
        follow_redirects=False,
    )
    assert answer.headers["location"] == "/"


def _draft_hash(demo: Demo, airfoil: str = "SKUA-210") -> str:
    """The airfoil's clean revision of lowest Reynolds number (a draft in the demo data)."""
    with session_scope(demo.app.state.session_factory, write=False) as session:
        return polar_store.list_revisions(session, airfoil=airfoil, surface="clean")[0].content_hash


def _state(demo: Demo, content_hash: str) -> str:
    with session_scope(demo.app.state.session_factory, write=False) as session:
        return polar_store.get_revision(session, content_hash).review_state


@pytest.mark.parametrize("csrf", [None, "", "wrong"])
def test_review_without_the_session_csrf_token_is_forbidden(demo: Demo, csrf):
    demo.sign_in("curator")
    target = _draft_hash(demo)
    data = {"revision": target, "action": "approve"}
    if csrf is not None:
        data["csrf_token"] = csrf
    answer = demo.client.post("/airfoils/SKUA-210/review", data=data, follow_redirects=False)
    assert answer.status_code == 403
    assert _state(demo, target) == "draft"


def test_sign_out_needs_the_csrf_token_too(demo: Demo):
    csrf = demo.sign_in("reader")
    assert demo.client.post("/sign-out", data={}, follow_redirects=False).status_code == 403
    answer = demo.client.post("/sign-out", data={"csrf_token": csrf}, follow_redirects=False)
    assert answer.status_code == 303
    assert demo.client.get("/", follow_redirects=False).status_code == 303


def test_a_curator_approves_a_draft_and_the_audit_trail_records_it(demo: Demo):
    csrf = demo.sign_in("curator")
    target = _draft_hash(demo)
    answer = demo.client.post(
        "/airfoils/SKUA-210/review",
        data={"csrf_token": csrf, "revision": target, "action": "approve"},
        follow_redirects=False,
    )
    assert answer.status_code == 303
    assert _state(demo, target) == "approved"
    page = demo.client.get(answer.headers["location"]).text
    assert "The revision is approved." in page
    with session_scope(demo.app.state.session_factory, write=False) as session:
        events = query_events(session, object_key=target, actor="demo-curator")
    assert [(e.action, e.actor_role) for e in events] == [("polar.review", "curator")]
    audit = demo.client.get("/audit?actor=demo-curator").text
    assert "polar.review" in audit
    approved = demo.client.get("/?review_state=approved").text
    assert "/airfoils/SKUA-210" in parse(approved).links


def test_deprecation_needs_a_reason(demo: Demo):
    csrf = demo.sign_in("curator")
    target = _draft_hash(demo)
    answer = demo.client.post(
        "/airfoils/SKUA-210/review",
        data={"csrf_token": csrf, "revision": target, "action": "deprecate", "reason": " "},
    )
    assert answer.status_code == 409
    assert "needs a reason" in answer.text
    answer = demo.client.post(
        "/airfoils/SKUA-210/review",
        data={"csrf_token": csrf, "revision": target, "action": "deprecate",
              "reason": "<b>superseded</b> by a new run"},
        follow_redirects=False,
    )
    assert answer.status_code == 303
    page = demo.client.get(answer.headers["location"]).text
    assert "&lt;b&gt;superseded&lt;/b&gt; by a new run" in page


def test_a_reader_cannot_review(demo: Demo):
    csrf = demo.sign_in("reader")
    target = _draft_hash(demo)
    page = demo.client.get("/airfoils/SKUA-210").text
    assert 'action="/airfoils/SKUA-210/review"' not in page
    answer = demo.client.post(
        "/airfoils/SKUA-210/review",
        data={"csrf_token": csrf, "revision": target, "action": "approve"},
    )
    assert answer.status_code == 403
    assert _state(demo, target) == "draft"


def test_a_revision_of_another_airfoil_cannot_be_reviewed_from_this_page(demo: Demo):
    csrf = demo.sign_in("curator")
    other = _draft_hash(demo, "SKUA-300")
    answer = demo.client.post(
        "/airfoils/SKUA-210/review",
        data={"csrf_token": csrf, "revision": other, "action": "approve"},
    )
    assert answer.status_code == 404
    assert _state(demo, other) == "draft"


def test_station_inputs_reach_the_served_table_and_its_lineage(demo: Demo):
    headers = demo.bearer("reader")
    page = demo.client.get(
        "/airfoils/SKUA-210?r_over_R=0.25&chord_over_r=0.3&model=snel", headers=headers
    ).text
    lineage_links = {link for link in parse(page).links if link.endswith("/lineage")}
    assert len(lineage_links) == 2  # extended and augmented (shown and listed as derived)
    pages = [demo.client.get(link, headers=headers).text for link in sorted(lineage_links)]
    (lineage,) = [html.unescape(p) for p in pages if "Lineage: augmented table" in p]
    assert '"r_over_R": 0.25' in lineage
    assert '"chord_over_r": 0.3' in lineage
    assert "/airfoils/SKUA-210?revision=" in lineage
    with session_scope(demo.app.state.session_factory, write=False) as session:
        kinds = sorted(session.scalars(select(DerivedTable.kind)).all())
    assert kinds == ["augmented", "extended"]


def test_unusable_station_inputs_fall_back_and_say_so(demo: Demo):
    page = demo.client.get(
        "/airfoils/SKUA-210?r_over_R=abc&model=nonsense", headers=demo.bearer("reader")
    ).text
    assert "r_over_R: &#39;abc&#39; is not a number" in page
    assert "model: &#39;nonsense&#39; is not one of" in page


def test_the_page_and_the_api_serve_the_same_augmented_table(demo: Demo):
    headers = demo.bearer("reader")
    target = _draft_hash(demo)
    page = demo.client.get(
        f"/airfoils/SKUA-210?revision={target[:16]}&r_over_R=0.3&chord_over_r=0.25"
        "&tip_speed_ratio=8&model=snel",
        headers=headers,
    ).text
    with session_scope(demo.app.state.session_factory, write=False) as session:
        before = sorted(session.scalars(select(DerivedTable.recipe_hash)).all())
    answer = demo.client.get(
        f"/api/v1/polars/{target}/augmented",
        params={"r_over_R": 0.3, "chord_over_r": 0.25, "tip_speed_ratio": 8, "model": "snel"},
        headers=headers,
    )
    assert answer.status_code == 200
    recipe_hash = answer.json()["recipe_hash"]
    assert f"/derived/{recipe_hash}/lineage" in page
    with session_scope(demo.app.state.session_factory, write=False) as session:
        after = sorted(session.scalars(select(DerivedTable.recipe_hash)).all())
    assert after == before  # a cache hit: the page had already stored this table
