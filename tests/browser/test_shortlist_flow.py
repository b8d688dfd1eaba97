"""Real browser (Chromium via Playwright): log in, build a shortlist of three candidates, compare, print-ready."""

from __future__ import annotations

import time
from typing import Any

import pytest

from tests.browser.conftest import screenshot

pytestmark = pytest.mark.browser


def log_in(page: Any, base: str) -> None:
    page.goto(f"{base}/login")
    page.fill("#email", "engineer@northfold.example")
    page.fill("#password", "northfold-demo")
    page.click("button[type=submit]")
    page.wait_for_url(f"{base}/")


def test_shortlist_of_three_and_compare_charts(live_server: str, page: Any) -> None:
    started = time.monotonic()
    log_in(page, live_server)
    page.goto(f"{live_server}/shortlists")
    page.fill("input[name=name]", "Browser finalists")
    page.select_option("select[name=mission_id]", label="Q4 mapping survey")
    page.click("button:has-text('Create')")
    page.wait_for_selector("#shortlist-name")
    for battery, motor, prop in (("3S1P 2200", "2814-class 880", "13x4.4"), ("4S1P 5200", "2814-class 700", "15x5"),
                                 ("6S1P 5000", "4010-class 370", "16x5.4")):
        for field, text in (("battery_id", battery), ("motor_id", motor), ("propeller_id", prop)):
            value = page.eval_on_selector(
                f"#{field}", "(el, t) => [...el.options].find(o => o.text.includes(t)).value", text)
            page.select_option(f"#{field}", value)
        page.click("form.grid-form button:has-text('Add')")
        page.wait_for_selector("#compare-table")
    assert page.locator("#compare-table thead th.entry-head").count() == 3
    page.wait_for_function("() => window.liftmatchCharts && window.liftmatchCharts.charts['chart-power']")
    series = page.evaluate("""() => {
        const sets = window.liftmatchCharts.charts['chart-power'].data.datasets;
        return {curves: sets.filter(d => d.showLine && d.label !== 'required thrust').length,
                required: sets.filter(d => d.label === 'required thrust').length,
                cruise: sets.filter(d => d.label.endsWith('(cruise)')).length};
    }""")
    assert series == {"curves": 3, "required": 1, "cruise": 3}
    gw_curves = page.evaluate("() => window.liftmatchCharts.charts['chart-gw'].data.datasets"
                              ".filter(d => d.showLine && d.label !== 'required thrust').length")
    assert gw_curves == 3
    assert page.locator("#compare-table td.best").count() > 5
    path = screenshot(page, "shortlist-compare")
    assert path.stat().st_size > 50_000
    assert page.js_errors == []
    assert time.monotonic() - started < 60
