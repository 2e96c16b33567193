"""A plan's map page in a real browser: Debian's chromium, driven by Playwright, against a
real ``tripsim serve`` process on loopback, with every other host blocked.

The page must show the route's path, one marker per stop, the stop list and the profile
without any network; a screenshot is left in the test artefacts.  Skips (with the reason)
where chromium or Playwright is missing; .ci/run installs both.
"""

from __future__ import annotations

import shutil
from urllib.parse import urlsplit

import httpx
import pytest

from tests.api.conftest import ARTIFACTS, DEPART, created, store_demo

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
#: As root, Chromium needs these (and no background traffic to hosts it cannot reach).
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                 "--disable-background-networking", "--disable-component-update",
                 "--disable-sync", "--disable-dev-shm-usage"]


@pytest.fixture(scope="module")
def browser():
    if CHROMIUM is None:
        pytest.skip("chromium is not installed (Debian package chromium; .ci/run installs it)")
    sync_api = pytest.importorskip("playwright.sync_api",
                                   reason="the playwright package is not installed")
    with sync_api.sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS, headless=True)
        yield b
        b.close()


def _loopback_only(route, blocked: list[str]) -> None:
    host = urlsplit(route.request.url).hostname or ""
    if route.request.url.startswith(("data:", "blob:")) or host in ("127.0.0.1", "localhost"):
        route.continue_()
    else:
        blocked.append(route.request.url)
        route.abort()


def test_plan_map_page_in_chromium(browser, live_server):
    base = live_server
    http = httpx.Client(base_url=base, timeout=120)
    demo = store_demo(http)
    plan = created(http, http.post("/plans", json={
        "route": demo["pass"], "vehicle": demo["vehicle"], "weather": demo["weather"],
        "depart": DEPART, "start_soc": 0.6,
        "plan": {"chargers": demo["chargers"], "lodging": demo["lodgings"],
                 "options": {"daily_window_h": [9, 17], "max_drive_h": 2}}}))
    stops = plan["result"]["stops"]
    assert plan["result"]["feasible"] and len(stops) >= 2
    assert any(s["kind"] == "overnight" or s["nights"] for s in stops)

    page = browser.new_page(viewport={"width": 1400, "height": 1100})
    blocked: list[str] = []
    errors: list[str] = []
    page.route("**/*", lambda route: _loopback_only(route, blocked))
    page.on("pageerror", lambda exc: errors.append(str(exc)))
    failed: list[str] = []
    page.on("requestfailed", lambda req: failed.append(req.url))
    page.goto(f"{base}{plan['links']['map']}", wait_until="load")
    page.wait_for_selector("path.tripsim-route")

    assert page.locator("path.tripsim-route").count() >= 1
    assert page.locator(".leaflet-marker-icon.tripsim-stop").count() == len(stops)
    assert page.locator(".leaflet-marker-icon.tripsim-night").count() >= 1
    assert page.locator(".leaflet-marker-icon.tripsim-start").count() == 1
    assert page.locator(".leaflet-marker-icon.tripsim-finish").count() == 1
    items = page.locator("li.tripsim-stop-item")
    assert items.count() == len(stops)
    assert stops[0]["name"] in items.first.inner_text()
    assert page.locator(".tripsim-profile svg").count() == 1
    assert "Caution" in page.locator(".tripsim-caution").inner_text()
    items.first.click()  # the list opens the marker's pop-up
    page.wait_for_selector(".leaflet-popup-content")
    assert stops[0]["name"] in page.locator(".leaflet-popup-content").inner_text()

    page.wait_for_timeout(400)  # the pop-up fades in
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    shot = ARTIFACTS / "plan-map.png"
    page.screenshot(path=str(shot), full_page=True)
    assert shot.stat().st_size > 20_000
    assert not errors, errors
    assert not blocked, f"the page asked other hosts: {blocked}"
    assert not failed, failed
    page.close()
