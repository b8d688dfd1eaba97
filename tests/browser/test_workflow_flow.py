"""Real browser (Chromium, 1400 px): forms with blank optional fields, the compare page on screen and on paper,
an edit conflict that a second click does not defeat."""

from __future__ import annotations

import io
from collections.abc import Iterator
from typing import Any

import pytest
from pypdf import PdfReader

from tests.browser.conftest import OUTPUT, screenshot

pytestmark = pytest.mark.browser
WIDE = {"width": 1400, "height": 900}


def logged_in(browser: Any, base: str) -> Any:
    context = browser.new_context(viewport=WIDE)
    page = context.new_page()
    page.js_errors = []
    page.on("pageerror", lambda e: page.js_errors.append(str(e)))
    page.goto(f"{base}/login")
    page.fill("#email", "engineer@northfold.example")
    page.fill("#password", "northfold-demo")
    page.click("button[type=submit]")
    page.wait_for_url(f"{base}/")
    return page


@pytest.fixture
def wide(browser: Any, live_server: str) -> Iterator[Any]:
    page = logged_in(browser, live_server)
    yield page
    page.context.close()


def test_airframe_and_mission_with_optional_fields_blank(live_server: str, wide: Any) -> None:
    page = wide
    page.goto(f"{live_server}/missions")
    page.click("summary:has-text('Add an airframe')")
    page.fill("#af-name", "Blank-field quad")
    page.fill("#af-rotor_count", "4")
    page.fill("#af-frame_mass_g", "850")
    assert page.input_value("#af-max_packs_in_parallel") == ""  # left blank, as a user would
    page.click("button:has-text('Save airframe')")
    page.wait_for_url(f"{live_server}/missions")
    airframe = page.locator("article.airframe", has_text="Blank-field quad")
    assert "up to 1 pack in parallel" in airframe.inner_text()
    page.click("summary:has-text('Add a mission')")
    page.select_option("#m-airframe_id", label="Blank-field quad")
    assert page.eval_on_selector("#m-kind", "el => el.tagName") == "SELECT"
    page.fill("#m-name", "Blank-field survey")
    page.click("button:has-text('Save mission')")
    page.wait_for_url(f"{live_server}/missions")
    airframe = page.locator("article.airframe", has_text="Blank-field quad")
    row = airframe.locator("tbody tr", has_text="Blank-field survey")
    cells = row.locator("td").all_inner_texts()
    assert cells[1] == "hover" and cells[5] == "2.00" and cells[6] == "0.400–0.750"  # the documented defaults
    assert page.locator(".error").count() == 0
    screenshot(page, "missions-blank-fields")
    assert page.js_errors == []


def _add_by_hand(page: Any, motor: str, prop: str) -> None:
    for field, text in (("motor_id", motor), ("propeller_id", prop)):
        value = page.eval_on_selector(f"#{field}", "(el, t) => [...el.options].find(o => o.text.includes(t)).value",
                                      text)
        page.select_option(f"#{field}", value)
    page.click("form.grid-form button:has-text('Add')")
    page.wait_for_selector("#compare-table")


def test_compare_fits_at_1400_px_and_prints_every_candidate(live_server: str, wide: Any) -> None:
    page = wide
    page.goto(f"{live_server}/shortlists")
    page.fill("input[name=name]", "Print check")
    page.select_option("select[name=mission_id]", label="Q4 mapping survey")
    page.click("button:has-text('Create')")
    page.wait_for_selector("#shortlist-name")
    for motor, prop in (("2814-class 880", "13x4.4"), ("2814-class 700", "15x5"), ("4010-class 370", "16x5.4")):
        _add_by_hand(page, motor, prop)
    heads = page.locator("#compare-table thead th.entry-head")
    assert heads.count() == 3
    width = page.evaluate("() => [document.documentElement.scrollWidth, document.documentElement.clientWidth]")
    assert width[0] <= width[1], width  # no sideways scrolling of the page
    inside = page.evaluate("""() => {
        const box = document.querySelector('.compare-scroll').getBoundingClientRect();
        return [...document.querySelectorAll('#compare-table th.entry-head')].map(h => {
            const r = h.getBoundingClientRect(); return r.left >= box.left - 1 && r.right <= box.right + 1; });
    }""")
    assert inside == [True, True, True]
    numbers = page.locator('#compare-table tr[data-key="parts.motors"] .part-number').all_inner_texts()
    numbers += page.locator('#compare-table tr[data-key="parts.propellers"] .part-number').all_inner_texts()
    assert len(numbers) == 6 and all(numbers)
    screenshot(page, "compare-1400")
    page.emulate_media(media="print")
    pdf = page.pdf(format="A4", prefer_css_page_size=True, print_background=True)
    OUTPUT.mkdir(exist_ok=True)
    (OUTPUT / "compare-print.pdf").write_bytes(pdf)
    reader = PdfReader(io.BytesIO(pdf))
    assert reader.pages[0].mediabox.width > reader.pages[0].mediabox.height  # A4 landscape
    text = "".join(p.extract_text() for p in reader.pages)
    for number in numbers:
        assert number in text, number
    for n in (1, 2, 3):
        assert f"Candidate {n}" in text
    assert page.js_errors == []


def test_a_second_save_after_a_conflict_does_not_overwrite(browser: Any, live_server: str, wide: Any) -> None:
    mine = wide
    mine.goto(f"{live_server}/parts/propellers?q=16x5.4")
    mine.locator("#parts-list tbody tr a").first.click()
    mine.wait_for_selector("#edit-form")
    url = mine.url
    colleague = logged_in(browser, live_server)
    try:
        colleague.goto(url)
        colleague.fill("#mass_g", "47")
        colleague.click("button:has-text('Save changes')")
        colleague.wait_for_url(f"{live_server}/parts/propellers")
        mine.fill("#mass_g", "44")
        mine.click("button:has-text('Save changes')")
        mine.wait_for_selector("#edit-conflict")
        assert mine.locator("#conflict-fields tbody tr").all_inner_texts() == ["Mass\t44\t47"]
        mine.click("button:has-text('Save changes')")  # again, without choosing
        mine.wait_for_selector("#edit-conflict")
        colleague.goto(url)
        assert colleague.input_value("#mass_g") == "47"  # the colleague's value stands
        screenshot(mine, "edit-conflict")
        mine.click("#edit-conflict button:has-text('Overwrite with my values')")
        mine.wait_for_url(f"{live_server}/parts/propellers")
        colleague.goto(url)
        assert colleague.input_value("#mass_g") == "44"  # now, by choice
    finally:
        colleague.context.close()
