"""Keeping safeguards trusted on a 390 px phone, in a real Chromium: the demo assessor
records a FAILED functional test with a photo on PR-103's two-hand control station,
then sees the machine page mark the station NOT TRUSTED and list the corrective
action. The pages of the due board and its neighbours are also looked at on the
phone and at desktop width.

Screenshots go to test-artifacts/browser/ (trust-*)."""

from __future__ import annotations

import datetime as dt
import hashlib
import re
import struct
import zlib
from pathlib import Path

import pytest
from playwright.sync_api import Page, expect

from seed_demo.build import DEMO_PASSWORD

pytestmark = pytest.mark.browser

ASSESSOR = "assessor@ostrander.invalid"
ADMIN = "admin@ostrander.invalid"
WIDTH = 390
DESKTOP = {"width": 1280, "height": 900}
STATION = "Two-hand control station with anti-tie-down"

_OVERFLOW_JS = """(w) => Array.from(document.querySelectorAll('body *'))
  .filter((el) => el.getBoundingClientRect().right > w + 0.5)
  .slice(0, 5)
  .map((el) => el.tagName.toLowerCase() + (el.id ? '#' + el.id : '')
       + (el.className && typeof el.className === 'string' ? '.' + el.className.trim().replace(/ +/g, '.') : '')
       + ' right=' + Math.round(el.getBoundingClientRect().right))"""


def png_photo(width: int = 48, height: int = 32) -> bytes:
    """A small real PNG (8-bit greyscale gradient), made here for the upload."""

    def chunk(kind: bytes, body: bytes) -> bytes:
        crc = zlib.crc32(kind + body) & 0xFFFFFFFF
        return struct.pack(">I", len(body)) + kind + body + struct.pack(">I", crc)

    rows = b"".join(
        b"\x00" + bytes((x * 5 + y * 3) % 256 for x in range(width)) for y in range(height)
    )
    return (
        b"\x89PNG\r\n\x1a\n"
        + chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0))
        + chunk(b"IDAT", zlib.compress(rows))
        + chunk(b"IEND", b"")
    )


def shot(page: Page, folder: Path, name: str, *, full_page: bool = True) -> None:
    page.screenshot(path=str(folder / f"trust-{name}.png"), full_page=full_page)


def assert_no_sideways_scroll(page: Page, where: str) -> None:
    width = page.evaluate("document.documentElement.scrollWidth")
    if width > WIDTH:
        culprits = page.evaluate(_OVERFLOW_JS, WIDTH)
        pytest.fail(f"{where}: the page is {width} px wide at a {WIDTH} px screen; {culprits}")


def log_in(page: Page, email: str) -> None:
    page.goto("/login")
    page.get_by_label("E-mail").fill(email)
    page.get_by_label("Password").fill(DEMO_PASSWORD)
    page.get_by_role("button", name="Log in").click()
    expect(page).to_have_url(re.compile(r"/sites/\d+$"))


def test_failed_functional_test_with_a_photo_makes_the_station_not_trusted(
    page_js: Page, artifacts: Path
) -> None:
    page = page_js
    log_in(page, ASSESSOR)
    # the overview's counts of what is due
    expect(page.locator(".due-counts")).to_contain_text("overdue")
    shot(page, artifacts, "01-overview")
    assert_no_sideways_scroll(page, "site overview")
    page.locator("li.mrow a").filter(has_text="PR-103").click()
    expect(page.get_by_role("heading", level=1)).to_contain_text("PR-103")
    expect(page.locator("#not-trusted")).to_have_count(0)

    page.get_by_role("link", name="Record a verification").first.click()
    expect(page.get_by_role("heading", level=1)).to_have_text("Record a verification")
    shot(page, artifacts, "02-form-empty")
    assert_no_sideways_scroll(page, "verification form")
    option = page.locator("#safeguard_id option", has_text=STATION)
    page.get_by_label("Safeguard").select_option(value=option.get_attribute("value"))
    page.locator('input[name="kind"][value="functional_test"]').check()
    page.locator('input[name="result"][value="fail"]').check()
    notes = "Releasing the right button did not stop the slide at the bottom of the stroke."
    page.get_by_label("Notes: what was found").fill(notes)
    photo = png_photo()
    page.set_input_files(
        "#files", files=[{"name": "station.png", "mimeType": "image/png", "buffer": photo}]
    )
    shot(page, artifacts, "03-form-filled")
    assert_no_sideways_scroll(page, "filled verification form")
    # the weekly-press certification fields are out of the way for a functional test
    expect(page.locator("fieldset.press-only")).to_be_hidden()
    page.get_by_role("button", name="Save the record").click()

    expect(page.get_by_role("heading", level=1)).to_have_text("Functional test by maintenance")
    expect(page.get_by_role("status")).to_contain_text("FAILED")
    expect(page.locator(".result-badge").first).to_have_text("Fail")
    expect(page.locator("ul.files")).to_contain_text("station.png")
    expect(page.locator("code.hash").first).to_have_text(hashlib.sha256(photo).hexdigest())
    shot(page, artifacts, "04-verification-saved")
    assert_no_sideways_scroll(page, "saved verification")

    page.get_by_role("link", name="Back to PR-103").click()
    banner = page.locator("#not-trusted")
    expect(banner).to_be_visible()
    expect(banner).to_contain_text("NOT TRUSTED")
    expect(banner.get_by_role("link", name=STATION)).to_be_visible()
    # the banner is the first thing on the page, above the heading
    top = page.evaluate(
        "() => [document.querySelector('#not-trusted').getBoundingClientRect().top,"
        " document.querySelector('h1').getBoundingClientRect().top]"
    )
    assert top[0] < top[1]
    shot(page, artifacts, "05-machine-not-trusted", full_page=False)
    today = dt.date.today().isoformat()
    action = page.locator("#actions ~ .card.action").filter(
        has_text=f"{STATION}: functional test by maintenance failed on {today}"
    )
    expect(action).to_have_count(1)
    expect(action).to_contain_text("open")
    expect(action).to_contain_text(notes)
    history = page.locator("#verifications ~ .card.verif").first
    expect(history).to_contain_text("Fail")
    expect(history).to_contain_text("station.png")
    action.scroll_into_view_if_needed()
    shot(page, artifacts, "06-machine-action", full_page=False)
    shot(page, artifacts, "07-machine-full")
    assert_no_sideways_scroll(page, "machine page with the failed test")


PAGES = [
    ("due", lambda site: f"/sites/{site}/due"),
    ("due-filtered", lambda site: f"/sites/{site}/due?area=Press+shop&kind=functional_test"),
    ("instruments", lambda site: f"/sites/{site}/instruments"),
    ("intervals", lambda site: f"/sites/{site}/intervals"),
    ("actions", lambda site: f"/sites/{site}/actions"),
    ("calendar", lambda site: f"/sites/{site}/calendar"),
]


def test_trust_pages_fit_a_phone_and_a_desktop(page_js: Page, artifacts: Path) -> None:
    page = page_js
    log_in(page, ADMIN)
    site = page.url.rsplit("/", 1)[1]
    machine = {
        tag: page.locator("li.mrow a").filter(has_text=tag).get_attribute("href") or ""
        for tag in ("PR-101", "PR-102")
    }
    page.goto(f"/sites/{site}/due")
    door = page.locator("#overdue a", has_text="Front sliding door interlock").first
    urls = [(name, make(site)) for name, make in PAGES] + [
        ("safeguard-HP-201", door.get_attribute("href") or ""),
        ("machine-PR-102", machine["PR-102"]),
        ("shift-check-PR-101", f"{machine['PR-101']}/shift-check"),
        ("verify-PR-102", f"{machine['PR-102']}/verifications/new?kind=weekly_press"),
    ]
    for name, url in urls:
        page.set_viewport_size({"width": WIDTH, "height": 844})
        page.goto(url)
        expect(page.get_by_role("heading", level=1)).to_be_visible()
        shot(page, artifacts, f"phone-{name}")
        assert_no_sideways_scroll(page, name)
        page.set_viewport_size(DESKTOP)
        page.goto(url)
        shot(page, artifacts, f"desktop-{name}")
    page.set_viewport_size({"width": WIDTH, "height": 844})
    # the demo has something overdue and something due within 30 days
    page.goto(f"/sites/{site}/due")
    expect(page.locator("#overdue li.due-row").first).to_be_visible()
    expect(page.locator("#within-30 li.due-row").first).to_be_visible()
    # the weekly press inspection asks for the certification fields, serial filled in
    page.goto(f"{machine['PR-102']}/verifications/new?kind=weekly_press")
    expect(page.locator("fieldset.press-only")).to_be_visible()
    expect(page.get_by_label("Press serial number")).to_have_value("HF-90544")
