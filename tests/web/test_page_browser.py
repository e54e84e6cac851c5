"""The phone page in headless Debian Chromium against the real server (``python -m webapp serve``).

Phone profile 390 x 844, touch, mobile. Every request that is not for 127.0.0.1 is recorded
and aborted, and each test asserts there were none. Screenshots go to test-artifacts/.
Outside references: sexagesimal degrees (d + m/60 + s/3600, common practice) for the echoed
position; the HTML specification's rule that text set as textContent is never parsed as
markup (WHATWG DOM standard, "textContent"), checked by watching for dialogs and img elements.
"""

from __future__ import annotations

import pytest

playwright_api = pytest.importorskip("playwright.sync_api")
expect = playwright_api.expect

from .helpers import live_api  # noqa: E402
from .live_server import get_json, running_server  # noqa: E402

pytestmark = pytest.mark.browser

from .browser import (  # noqa: E402
    ARTIFACTS,
    PHONE,
    keep_on_loopback,
)

WEDNESDAY = "2026-03-04"
THURSDAY = "2026-03-05"
SOLVE_TIMEOUT_MS = 45_000
# Demo clients near home, open all Wednesday: a day that fits with room for one more.
DAY_CLIENTS = ["Maison Bourgeon", "Terreaux & Compagnie", "Le Petit Arrosoir",
               "Jardinerie des Bords du Cher", "Rosier de la Rive Gauche"]
EXTRA_CLIENT = "Graineterie de la Tour"
HOSTILE = "<img src=x onerror=alert(1)>"


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    with running_server(tmp_path_factory.mktemp("browser") / "data", demo=True) as (base, _):
        yield base


@pytest.fixture
def phone(browser):
    """A phone-sized page; ``phone.outside`` lists any request that tried to leave loopback."""
    context = browser.new_context(**PHONE, permissions=["geolocation"],
                                  geolocation={"latitude": 47.3800, "longitude": 0.7000})
    dialogs: list[str] = []
    errors: list[str] = []
    outside = keep_on_loopback(context)
    page = context.new_page()
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.outside, page.dialogs, page.errors = outside, dialogs, errors
    yield page
    context.close()
    assert outside == [], f"requests left 127.0.0.1: {outside}"
    assert errors == [], f"the page raised: {errors}"


def _shot(page, name: str, *, full: bool = False) -> None:
    ARTIFACTS.mkdir(exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / f"{name}.png"), full_page=full)


def test_a_day_from_pasted_client_to_replan(server, phone):
    page = phone
    # 1. Add a client by pasting coordinates; the laptop echoes how it reads them.
    page.goto(server + "/clients")
    page.get_by_role("button", name="New client").click()
    form = page.locator("#client-form")
    form.locator('[name="name"]').fill("Kiosque du Pont Neuf")
    form.locator('[name="location"]').fill("47°23'30\"N 0°41'20\"E")
    # 47 + 23/60 + 30/3600 = 47.391667; 41/60 + 20/3600 = 0.688889
    expect(page.locator("#location-echo")).to_have_text("Reads as 47.39167° N, 0.68889° E")
    form.locator('[name="visit_min"]').fill("20")
    form.locator('[name="windows.wed"]').fill("09:00-17:00")
    _shot(page, "01-client-form")
    page.locator("#client-save").click()
    expect(page.locator("#client-list")).to_contain_text("Kiosque du Pont Neuf")
    expect(page.locator("#toast")).to_contain_text("Saved Kiosque du Pont Neuf")

    # 2. Choose the day's visits and have the laptop work out the order.
    page.goto(f"{server}/day?date={WEDNESDAY}")
    page.locator("#picker summary").click()
    for name in [*DAY_CLIENTS, "Kiosque du Pont Neuf"]:
        page.locator("#picker-list li", has_text=name).locator("input").check()
    page.locator("#picker-save").click()
    expect(page.locator("#chosen-list li")).to_have_count(len(DAY_CLIENTS) + 1)
    page.locator("#solve-button").click()
    expect(page.locator("#proof")).to_contain_text("Proven best", timeout=SOLVE_TIMEOUT_MS)
    stops = page.locator("#stops > li")
    expect(stops).to_have_count(len(DAY_CLIENTS) + 1 + 2)  # + leaving and coming home
    expect(page.locator("#total-km")).to_contain_text(" km")
    expect(page.locator("#total-return")).to_have_text(
        live_api(server, "GET", f"/api/days/{WEDNESDAY}")["plan"]["return"])
    expect(page.locator("#caution")).to_contain_text("Never handle the phone while driving")
    expect(page.locator("#timeline rect.tl-visit")).to_have_count(len(DAY_CLIENTS) + 1)
    page.locator("#plan").scroll_into_view_if_needed()
    _shot(page, "02-day-plan")
    page.locator("#timeline").scroll_into_view_if_needed()
    _shot(page, "03-clock-view")

    # 3. Mark the first visit done.
    first = stops.nth(1)
    first_name = first.locator(".name").inner_text()
    first.locator(".done-btn").click()
    expect(page.locator("#done-dialog")).to_be_visible()
    page.locator("#done-save").click()
    expect(page.locator("#done-list")).to_contain_text(first_name)
    expect(page.locator('input[name="where"][value="client"]')).to_be_checked()

    # 4. A last-minute visit: see what it costs, then add it and re-plan from here.
    page.locator("#now").fill("10:30")
    page.locator("#extra-client").select_option(label=EXTRA_CLIENT)
    page.locator("#quote-button").click()
    expect(page.locator("#quote-exact")).to_contain_text(f"{EXTRA_CLIENT}: ",
                                                         timeout=SOLVE_TIMEOUT_MS)
    expect(page.locator("#quote-exact")).to_contain_text(" km")
    expect(page.locator("#quote-estimate")).to_contain_text("Quick estimate")
    page.locator("#quote").scroll_into_view_if_needed()
    _shot(page, "04-extra-visit-cost")
    page.locator("#quote-add").click()
    expect(page.locator("#stops")).to_contain_text(EXTRA_CLIENT, timeout=SOLVE_TIMEOUT_MS)
    expect(stops.first).to_contain_text(f"Leave {first_name}")
    expect(stops.first).to_contain_text("10:30")
    expect(page.locator("#stops")).not_to_contain_text("Mark " + first_name)
    expect(stops).to_have_count(len(DAY_CLIENTS) + 1 + 2)  # one done out, one extra in
    page.locator("#plan").scroll_into_view_if_needed()
    _shot(page, "05-replanned")

    # 5. Re-plan again from the phone's own position.
    page.locator('input[name="where"][value="gps"]').check()
    page.locator("#replan-button").click()
    expect(stops.first).to_contain_text("Leave where you are", timeout=SOLVE_TIMEOUT_MS)
    day = live_api(server, "GET", f"/api/days/{WEDNESDAY}")
    assert day["plan"]["start"]["lat"] == pytest.approx(47.38)
    assert [d["name"] for d in day["done"]] == [first_name]
    _shot(page, "06-road-form", full=True)


def test_a_hostile_name_is_shown_as_text_and_runs_nothing(server, phone):
    page = phone
    home = get_json(server + "/api/settings")["home"]
    hostile = live_api(server, "POST", "/api/clients", {
        "name": HOSTILE, "location": f"{home['lat'] + 0.01}, {home['lon']}", "visit_min": 15})
    other = next(c for c in get_json(server + "/api/clients?active=true")
                 if c["name"] == "Le Petit Arrosoir")
    live_api(server, "PUT", f"/api/days/{THURSDAY}/visits",
         {"client_ids": [hostile["id"], other["id"]]})

    page.goto(server + "/clients?x=1")
    expect(page.locator("#client-list")).to_contain_text(HOSTILE)
    page.goto(f"{server}/day?date={THURSDAY}")
    expect(page.locator("#chosen-list")).to_contain_text(HOSTILE)
    page.locator("#solve-button").click()
    expect(page.locator("#proof")).to_contain_text("Proven best", timeout=SOLVE_TIMEOUT_MS)
    expect(page.locator("#stops")).to_contain_text(HOSTILE)
    expect(page.locator("#timeline text", has_text=HOSTILE)).to_have_count(1)
    page.locator("#stops").scroll_into_view_if_needed()
    _shot(page, "07-hostile-name")
    assert page.locator("img").count() == 0
    page.goto(server + "/drives")
    expect(page.locator("#drive-from option", has_text=HOSTILE)).to_have_count(1)
    assert page.locator("img").count() == 0
    assert page.dialogs == []
