"""Hazard entry on a phone-sized screen, in a real Chromium: the demo assessor adds a
hazard to press PR-101, watches the required level follow the S, F and P choices,
saves, and finds the hazard on the machine page with its level. The same form also
works with JavaScript off, the level then being worked out on save.

Screenshots of every step go to test-artifacts/browser/."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from seed_demo.build import DEMO_PASSWORD

pytestmark = pytest.mark.browser

ASSESSOR = "assessor@ostrander.invalid"
WIDTH = 390

# Lists the elements that stick out past the right edge, to say what scrolls.
_OVERFLOW_JS = """(w) => Array.from(document.querySelectorAll('body *'))
  .filter((el) => el.getBoundingClientRect().right > w + 0.5)
  .slice(0, 5)
  .map((el) => el.tagName.toLowerCase() + (el.id ? '#' + el.id : '')
       + (el.className && typeof el.className === 'string' ? '.' + el.className.trim().replace(/ +/g, '.') : '')
       + ' right=' + Math.round(el.getBoundingClientRect().right))"""


def shot(page: Page, folder: Path, name: str, *, full_page: bool = True) -> None:
    page.screenshot(path=str(folder / f"{name}.png"), full_page=full_page)


def assert_no_sideways_scroll(page: Page, where: str) -> None:
    width = page.evaluate("document.documentElement.scrollWidth")
    if width > WIDTH:
        culprits = page.evaluate(_OVERFLOW_JS, WIDTH)
        pytest.fail(f"{where}: the page is {width} px wide at a {WIDTH} px screen; {culprits}")


def log_in_and_open_pr101(page: Page, folder: Path, prefix: str) -> None:
    page.goto("/")
    expect(page.get_by_role("heading", name="Log in")).to_be_visible()
    shot(page, folder, f"{prefix}01-login")
    assert_no_sideways_scroll(page, "login page")
    page.get_by_label("E-mail").fill(ASSESSOR)
    page.get_by_label("Password").fill(DEMO_PASSWORD)
    page.get_by_role("button", name="Log in").click()

    expect(page).to_have_url(re.compile(r"/sites/\d+$"))
    expect(page.get_by_role("heading", level=1)).to_have_text("Ostrander Vale Pressworks")
    shot(page, folder, f"{prefix}02-site-overview")
    assert_no_sideways_scroll(page, "site overview")
    page.locator("li.mrow a").filter(has_text="PR-101").click()

    expect(page.get_by_role("heading", level=1)).to_contain_text("PR-101")
    shot(page, folder, f"{prefix}03-machine")
    assert_no_sideways_scroll(page, "machine page of PR-101")
    page.get_by_role("link", name="Add a hazard").click()

    expect(page.get_by_role("heading", level=1)).to_have_text("New hazard on PR-101")


def fill_hazard(page: Page, event: str) -> None:
    page.get_by_label("Hazard group").select_option(label="Mechanical")
    page.get_by_label("Type", exact=True).fill("crushing")
    page.get_by_label("What could happen").fill(event)


def choose(page: Page, field: str, value: str) -> None:
    page.locator(f'input[name="{field}"][value="{value}"]').check()


def saved_hazard(page: Page) -> str:
    """The id of the list item the save redirected to (the URL ends in #h<id>)."""
    expect(page).to_have_url(re.compile(r"/machines/\d+#h\d+$"))
    return page.url.rsplit("#", 1)[1]


def test_hazard_entry_shows_the_level_live_and_saves_it(page_js: Page, artifacts: Path) -> None:
    page = page_js
    log_in_and_open_pr101(page, artifacts, "js-")
    shot(page, artifacts, "js-04-hazard-form")
    assert_no_sideways_scroll(page, "empty hazard form")

    event = "Hand between the dies while clearing a misfed blank (browser test, JS on)"
    fill_hazard(page, event)
    level = page.locator("#live-level")
    note = page.locator("#live-note")
    expect(level).to_have_text("choose below")

    choose(page, "s", "S2")
    # Only S is chosen: no level yet, the script says what is still missing.
    expect(note).to_have_text("Still to choose: frequency, avoidance.")
    expect(level).to_contain_text("choose")
    level.scroll_into_view_if_needed()
    shot(page, artifacts, "js-05-chose-S2", full_page=False)

    choose(page, "f", "F2")
    expect(note).to_have_text("Still to choose: avoidance.")
    expect(level).to_contain_text("choose")
    shot(page, artifacts, "js-06-chose-F2", full_page=False)

    choose(page, "p", "P1")
    # ISO 13849-1:2015 Annex A, Figure A.1 risk graph: S2, F2, P1 → PLr d [std, from memory]
    expect(level).to_have_text("PL d")
    shot(page, artifacts, "js-07-chose-P1", full_page=False)

    choose(page, "p", "P2")
    # ISO 13849-1:2015 Annex A, Figure A.1 risk graph: S2, F2, P2 → PLr e [std, from memory]
    expect(level).to_have_text("PL e")
    shot(page, artifacts, "js-08-chose-P2", full_page=False)
    shot(page, artifacts, "js-09-hazard-form-filled")
    assert_no_sideways_scroll(page, "filled hazard form")

    page.get_by_role("button", name="Save hazard").click()
    hid = saved_hazard(page)
    shot(page, artifacts, "js-10-after-save-screen", full_page=False)
    expect(page.get_by_role("status")).to_contain_text("Hazard saved.")
    item = page.locator(f"li.hazard#{hid}")
    expect(item).to_contain_text(event)
    expect(item.locator(".hz-type")).to_have_text("Mechanical: crushing")
    # The first badge is the level before measures; no residual rating yet.
    # ISO 13849-1:2015 Annex A, Figure A.1 risk graph: S2, F2, P2 → PLr e [std, from memory]
    expect(item.locator(".ratings .level").first).to_have_text("PL e")
    expect(item.locator(".ratings .level").nth(1)).to_have_text("not rated")
    shot(page, artifacts, "js-11-machine-after-save")
    item.screenshot(path=str(artifacts / "js-12-saved-hazard.png"))
    assert_no_sideways_scroll(page, "machine page after the save")


def test_hazard_form_works_without_javascript(page_no_js: Page, artifacts: Path) -> None:
    page = page_no_js
    log_in_and_open_pr101(page, artifacts, "nojs-")
    # Without the script every method's parameters stay on the page.
    expect(page.locator('.params[data-method="iso13849"]')).to_be_visible()
    expect(page.locator('.params[data-method="iec62061"]')).to_be_visible()
    shot(page, artifacts, "nojs-04-hazard-form")
    assert_no_sideways_scroll(page, "hazard form without JavaScript")

    event = "Fingers trapped at the ejector while removing a part (browser test, JS off)"
    fill_hazard(page, event)
    choose(page, "s", "S1")
    choose(page, "f", "F2")
    choose(page, "p", "P2")
    # Nothing computes the level in the page: it keeps the text the server wrote.
    expect(page.locator("#live-level")).to_have_text("computed on save")
    shot(page, artifacts, "nojs-05-hazard-form-filled")

    page.get_by_role("button", name="Save hazard").click()
    hid = saved_hazard(page)
    shot(page, artifacts, "nojs-06-after-save-screen", full_page=False)
    expect(page.get_by_role("status")).to_contain_text("Hazard saved.")
    item = page.locator(f"li.hazard#{hid}")
    expect(item).to_contain_text(event)
    # ISO 13849-1:2015 Annex A, Figure A.1 risk graph: S1, F2, P2 → PLr c [std, from memory]
    expect(item.locator(".ratings .level").first).to_have_text("PL c")
    shot(page, artifacts, "nojs-07-machine-after-save")
    assert_no_sideways_scroll(page, "machine page after the save without JavaScript")
