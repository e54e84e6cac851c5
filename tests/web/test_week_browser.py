"""The week screen in headless Debian Chromium against the real server (``python -m webapp serve``).

Phone profile 390 x 844, touch, mobile, demo data. Every request not for 127.0.0.1 is recorded
and aborted, and the test asserts there were none. Screenshots go to test-artifacts/.
Outside references: the Gregorian calendar (ISO 8601 weeks start on Monday) for the dates on
the cards; the rest is checked against the laptop's own API answers (the same server).
"""

from __future__ import annotations

import json
import re
import urllib.parse
import urllib.request
from pathlib import Path

import pytest

playwright_api = pytest.importorskip("playwright.sync_api")
expect = playwright_api.expect

from .live_server import running_server  # noqa: E402

pytestmark = pytest.mark.browser

from .browser import (  # noqa: E402
    ARTIFACTS,
    PHONE,
    keep_on_loopback,
)

NARROW = {**PHONE, "viewport": {"width": 360, "height": 780}}
MONDAY = "2026-03-02"
SOLVE_TIMEOUT_MS = 90_000
CAP = "6"  # about thirty demo clients, six a day: all five weekdays are used


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    with running_server(tmp_path_factory.mktemp("week-browser") / "data", demo=True) as (base, _):
        yield base


def _page(browser, profile):
    context = browser.new_context(**profile)
    errors: list[str] = []
    seen: list[str] = []
    outside = keep_on_loopback(context)
    page = context.new_page()
    page.on("request", lambda r: seen.append(r.url))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.outside, page.errors, page.seen = outside, errors, seen
    return context, page


@pytest.fixture
def phone(browser):
    context, page = _page(browser, PHONE)
    yield page
    context.close()
    assert page.outside == [], f"requests left 127.0.0.1: {page.outside}"
    assert page.errors == [], f"the page raised: {page.errors}"
    # Frames too (the map): every URL the browser asked for was on this laptop.
    assert all(urllib.parse.urlsplit(u).hostname == "127.0.0.1" for u in page.seen
               if not u.startswith(("data:", "about:", "blob:"))), page.seen


def _shot(page, name: str, *, full: bool = False) -> Path:
    ARTIFACTS.mkdir(exist_ok=True)
    path = ARTIFACTS / f"{name}.png"
    page.screenshot(path=str(path), full_page=full)
    return path


def _get(base: str, path: str):
    with urllib.request.urlopen(base + path, timeout=10) as response:
        return json.loads(response.read())


def test_a_week_of_the_demo_on_the_phone(server, phone):
    page = phone
    page.goto(f"{server}/week?week=2026-03-04")  # a Wednesday: the page shows its week
    expect(page.locator("#week-date")).to_have_value(MONDAY)
    expect(page.locator("#week-span")).to_have_text("Monday 2 Mar to Sunday 8 Mar")
    active = _get(server, "/api/clients?active=true")
    expect(page.locator("#due-count")).to_contain_text(f"{len(active)} of {len(active)} active "
                                                       "clients ticked")
    # One client is not due this week: it will be the one who calls.
    caller = active[0]
    page.locator("#due-list li").first.get_by_role("checkbox").uncheck()
    expect(page.locator("#due-count")).to_contain_text(f"{len(active) - 1} of {len(active)}")
    page.locator("#max-visits").fill(CAP)
    _shot(page, "week-01-form")
    page.get_by_role("button", name="Spread over the week").click()
    expect(page.locator("#progress")).to_be_visible()
    cards = page.locator(".day-card")
    expect(cards).to_have_count(5, timeout=SOLVE_TIMEOUT_MS)
    expect(page.locator("#progress")).to_be_hidden()

    # Five cards, Monday to Friday, each with its visits, km, time at the wheel and a proof.
    week = _get(server, f"/api/weeks/{MONDAY}")
    assert [d["name"] for d in week["days"]] == ["Monday", "Tuesday", "Wednesday",
                                                  "Thursday", "Friday"]
    for k, day in enumerate(week["days"]):
        card = cards.nth(k)
        expect(card.locator("h2")).to_have_text(f"{day['name']} {2 + k} Mar")
        assert 1 <= day["visits"] <= int(CAP)
        expect(card.locator(".week-visits li")).to_have_count(day["visits"])
        expect(card.locator(".totals")).to_contain_text(f"{day['km']:.1f} km")
        expect(card.locator(".proof")).to_have_text(day["proof"])
    proof = page.locator("#week-proof")
    expect(proof).to_have_text(week["proof"]["text"])
    assert re.match(r"(Proven best week|At most \d+\.\d % more driving than the best possible "
                    r"week)", week["proof"]["text"])
    expect(page.locator("#week-km")).to_have_text(f"{week['totals']['km']:.1f} km")
    expect(page.locator("#caution")).to_be_visible()
    expect(page.locator("#caution")).to_contain_text("Never handle the phone while driving")
    assert caller["name"] not in [c["name"] for d in week["days"] for c in d["clients"]]
    expect(page.locator("#toast")).to_be_hidden(timeout=8_000)
    page.locator("#week-summary").scroll_into_view_if_needed()
    _shot(page, "week-02-planned")

    # The client calls: each remaining day's extra driving, cheapest first.
    page.locator("#caller-client").select_option(str(caller["id"]))
    page.get_by_role("button", name="Find the cheapest day").click()
    answer = page.locator("#caller-answer")
    expect(answer).to_be_visible(timeout=30_000)
    expect(page.locator("#caller-title")).to_contain_text(f"{caller['name']}: cheapest on")
    first = answer.locator("li.fits").first
    assert re.search(r"\+\d+\.\d km driving", first.inner_text()), first.inner_text()
    answer.scroll_into_view_if_needed()
    _shot(page, "week-02b-caller")

    # The map: the week's loops in a frame, drawn from this laptop only.
    page.locator("#map-card").scroll_into_view_if_needed()
    frame = page.frame_locator("#week-map")
    expect(frame.locator(".rondo-pin").first).to_be_attached(timeout=15_000)
    expect(frame.locator(".rondo-week-caution")).to_contain_text(
        re.compile("never handle the phone while driving", re.I))
    page.wait_for_timeout(600)  # let Leaflet finish fitting the bounds before the picture
    _shot(page, "week-03-map")

    # Move one client: its cost on each other day shows first, then the move.
    source = week["days"][0]
    mover = source["clients"][0]
    first_card = cards.nth(0)
    first_card.scroll_into_view_if_needed()
    first_card.get_by_role("button", name=f"Move {mover['name']} to another day").click()
    dialog = page.locator("#move-dialog")
    expect(dialog).to_be_visible()
    options = dialog.locator(".day-quotes li.fits")
    expect(options.first).to_be_visible(timeout=30_000)
    text = options.first.inner_text()
    assert re.search(r"[+\u2212]?\d+\.\d km for the week", text), text
    target_weekday = options.first.get_attribute("data-weekday")
    _shot(page, "week-04-move-costs")
    options.first.get_by_role("button").click()
    target = next(d for d in week["days"] if d["weekday"] == target_weekday)
    target_card = page.locator(f'.day-card[data-weekday="{target_weekday}"]')
    expect(target_card.locator(".week-visits")).to_contain_text(mover["name"],
                                                                timeout=SOLVE_TIMEOUT_MS)
    expect(first_card.locator(".week-visits")).not_to_contain_text(mover["name"])
    expect(target_card.locator(".tag.pin")).to_have_count(1)
    expect(page.locator("#week-changed")).to_contain_text("Changed by hand")
    moved = _get(server, f"/api/weeks/{MONDAY}")
    assert mover["client_id"] in [c["client_id"] for d in moved["days"]
                                  if d["weekday"] == target_weekday for c in d["clients"]]
    _shot(page, "week-05-moved")

    # Open that day in the day screen: the moved visit is in its worked-out order.
    target_card.get_by_role("link", name=f"Open {target['name']} in the day screen").click()
    page.wait_for_url(re.compile(rf"/day\?date={target['date']}$"))
    expect(page.locator("#stops")).to_contain_text(mover["name"])
    expect(page.locator("#proof")).to_contain_text("Proven best")
    _shot(page, "week-06-day-opened")


def test_five_tabs_fit_a_360_px_phone(server, browser):
    context, page = _page(browser, NARROW)
    try:
        page.goto(f"{server}/week?week={MONDAY}")
        tabs = page.locator(".tabbar .tab")
        expect(tabs).to_have_count(5)
        expect(page.locator(".tab.current")).to_have_text("Week")
        for k in range(5):
            box = tabs.nth(k).bounding_box()
            assert box["width"] >= 48 and box["height"] >= 48  # touch targets
            label = tabs.nth(k).locator("span")
            # The label fits its tab: no overflow past the tab's edges.
            assert label.evaluate("e => e.scrollWidth <= e.parentElement.clientWidth")
        _shot(page, "week-07-tabs-360")
        assert page.outside == [] and page.errors == []
    finally:
        context.close()
