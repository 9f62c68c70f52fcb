"""End to end in a real browser: the system Chromium driven by Playwright (sync API) against
the application served by a real uvicorn server on a free loopback port.

A curator's path through the pages: catalogue -> airfoil -> plots -> station inputs ->
sign in -> approve a draft. A screenshot of the airfoil page goes to test-artifacts/.
"""

from __future__ import annotations

import socket
import threading
import time
from collections.abc import Iterator
from dataclasses import replace
from pathlib import Path

import pytest

from polarsvc.api.app import create_app
from polarsvc.store import polars as polar_store
from polarsvc.store.db import session_scope

CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = [
    "--disable-dev-shm-usage",
    "--disable-background-networking",
    "--disable-component-update",
    "--no-first-run",
    "--disable-sync",
]
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts"

pytestmark = pytest.mark.browser


def _free_port() -> int:
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as probe:
        probe.bind(("127.0.0.1", 0))
        return probe.getsockname()[1]


@pytest.fixture
def live_server(demo_settings) -> Iterator[tuple[str, object]]:
    """The demo application (public reads on) behind uvicorn in a thread."""
    import uvicorn

    app = create_app(replace(demo_settings, public_reads=True))
    port = _free_port()
    server = uvicorn.Server(
        uvicorn.Config(app, host="127.0.0.1", port=port, log_level="warning", lifespan="on")
    )
    thread = threading.Thread(target=server.run, name="polarsvc-test-server", daemon=True)
    thread.start()
    deadline = time.monotonic() + 30.0
    while not server.started:
        if not thread.is_alive() or time.monotonic() > deadline:
            pytest.fail("the test server did not start")
        time.sleep(0.05)
    try:
        yield f"http://127.0.0.1:{port}", app
    finally:
        server.should_exit = True
        thread.join(timeout=30.0)


def _images_loaded(page) -> list[str]:
    """Sources of the page's images that did not load."""
    return page.eval_on_selector_all(
        "img", "els => els.filter(e => !(e.complete && e.naturalWidth > 0)).map(e => e.src)"
    )


def test_a_curator_reviews_a_draft_in_the_browser(live_server, demo_database):
    if not CHROMIUM.exists():
        pytest.skip(f"no system Chromium at {CHROMIUM} (install the distribution's chromium)")
    sync_api = pytest.importorskip("playwright.sync_api")
    base, app = live_server
    problems: list[str] = []
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(
            headless=True, executable_path=str(CHROMIUM), args=CHROMIUM_ARGS
        )
        try:
            page = browser.new_page(viewport={"width": 1280, "height": 900})
            page.on("console", lambda m: m.type == "error" and problems.append(m.text))
            page.on(
                "requestfailed",
                # images still loading when a form navigates away are aborted: not a fault
                lambda r: r.failure != "net::ERR_ABORTED" and problems.append(f"{r.url}"),
            )

            # the catalogue with the demo data, then an airfoil
            page.goto(base + "/")
            assert page.locator("h1").inner_text() == "Catalogue"
            page.get_by_role("link", name="SKUA-210", exact=True).click()
            page.wait_for_url("**/airfoils/SKUA-210")
            page.wait_for_load_state("networkidle")
            assert page.locator("figure.plot img").count() == 6
            assert _images_loaded(page) == []

            # other station inputs: the page and its plot addresses follow
            page.fill("input[name=r_over_R]", "0.2")
            page.fill("input[name=chord_over_r]", "0.3")
            page.select_option("select[name=model]", "du-selig")
            page.get_by_role("button", name="Update plots").click()
            page.wait_for_url("**r_over_R=0.2**")
            page.wait_for_load_state("networkidle")
            sources = page.eval_on_selector_all("figure.plot img", "els => els.map(e => e.src)")
            assert all("r_over_R=0.2" in s and "model=du-selig" in s for s in sources)
            assert _images_loaded(page) == []
            assert page.locator("select[name=model]").input_value() == "du-selig"
            assert page.locator("input[name=r_over_R]").input_value() == "0.2"

            # sign in with a curator token, back on the airfoil page
            page.get_by_role("link", name="sign in with a curator token").click()
            page.fill("#token", demo_database.secrets["curator"])
            page.get_by_role("button", name="Sign in").click()
            page.wait_for_url("**/airfoils/SKUA-210?**r_over_R=0.2**")
            assert "demo-curator" in page.locator("header").inner_text()

            # approve the draft shown
            with session_scope(app.state.session_factory, write=False) as session:
                draft = polar_store.list_revisions(
                    session, airfoil="SKUA-210", surface="clean"
                )[0].content_hash
            page.get_by_role("button", name="Approve").click()
            page.wait_for_load_state("networkidle")
            assert page.get_by_role("status").inner_text() == "The revision is approved."
            assert page.locator("tr.current .state").inner_text() == "approved"
            assert page.get_by_role("spinbutton", name="r/R [-]").input_value() == "0.2"  # kept
            assert _images_loaded(page) == []

            ARTIFACTS.mkdir(exist_ok=True)
            page.screenshot(path=str(ARTIFACTS / "airfoil-page.png"), full_page=True)
        finally:
            browser.close()
    with session_scope(app.state.session_factory, write=False) as session:
        assert polar_store.get_revision(session, draft).review_state == "approved"
    assert problems == [], problems


def _scroll_through(page, images) -> None:
    """Bring every (lazily loaded) image into view and wait for the loads."""
    for index in range(images.count()):
        image = images.nth(index)
        image.scroll_into_view_if_needed()
        page.wait_for_function("img => img.complete && img.naturalWidth > 0",
                               arg=image.element_handle(), timeout=120_000)


def test_the_blade_page_shows_rotor_performance_and_a_comparison(live_server, demo_database):
    if not CHROMIUM.exists():
        pytest.skip(f"no system Chromium at {CHROMIUM} (install the distribution's chromium)")
    sync_api = pytest.importorskip("playwright.sync_api")
    base, _ = live_server
    problems: list[str] = []
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(
            headless=True, executable_path=str(CHROMIUM), args=CHROMIUM_ARGS
        )
        try:
            page = browser.new_page(viewport={"width": 1280, "height": 900})
            page.on("console", lambda m: m.type == "error" and problems.append(m.text))
            page.on(
                "requestfailed",
                lambda r: r.failure != "net::ERR_ABORTED" and problems.append(f"{r.url}"),
            )
            page.goto(base + "/blades/skerry-48", timeout=120_000)
            page.wait_for_load_state("networkidle", timeout=120_000)
            assert "screening check" in page.locator("p[role=note]").inner_text()
            rotor = page.locator("img[src*='/rotor-']")
            assert rotor.count() == 3
            _scroll_through(page, page.locator("img"))
            assert _images_loaded(page) == []
            # spanwise loads at another wind speed, compared without augmentation
            page.select_option("select[name=loads_at]", "15.0")
            page.select_option("select[name=compare]", "rotation-none")
            page.get_by_role("button", name="Show").click()
            page.wait_for_url("**compare=rotation-none**", timeout=120_000)
            page.wait_for_load_state("networkidle", timeout=120_000)
            assert page.locator("img[src*='/rotor-']").count() == 5
            _scroll_through(page, page.locator("img"))
            assert _images_loaded(page) == []
            assert page.locator("select[name=loads_at]").input_value() == "15.0"
            assert "without rotational augmentation" in page.locator(
                "table[aria-label='comparison of annual energy']").inner_text().lower()
            ARTIFACTS.mkdir(exist_ok=True)
            page.screenshot(path=str(ARTIFACTS / "blade-rotor.png"), full_page=True)
        finally:
            browser.close()
    assert problems == [], problems
