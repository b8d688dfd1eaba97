"""Real browser: log in, rank a demo mission with the live progress bar, shortlist three rows, compare, screenshot."""

from __future__ import annotations

import time
from typing import Any

import pytest

from tests.browser.conftest import screenshot
from tests.browser.test_shortlist_flow import log_in

pytestmark = pytest.mark.browser


def test_rank_then_shortlist_three_and_compare(live_server: str, page: Any) -> None:
    started = time.monotonic()
    log_in(page, live_server)
    page.goto(f"{live_server}/rankings")
    page.select_option("#mission_id", label="Q4 mapping survey")
    page.click("#start-ranking button[type=submit]")
    page.wait_for_url(f"{live_server}/rankings/*")
    page.wait_for_selector("#ranking-summary", timeout=60_000)  # the progress block swapped itself for results
    assert page.locator("#ranking-progress").count() == 0
    assert page.locator("#results tbody tr").count() >= 3
    page.wait_for_function("() => window.liftmatchCharts && window.liftmatchCharts.charts['chart-pareto']")
    screenshot(page, "ranking-results")
    # Three rows into a new shortlist: the first "Add" creates it, and the chooser then points every row at it.
    assert page.locator("#shortlist-choice option:checked").inner_text() == "+ a new shortlist"
    for rank in (1, 2, 3):
        page.locator(f"#row-{rank} button.add-row").click()
        page.wait_for_selector(f"#added-{rank}:has-text('✓')")
    assert "Q4 mapping survey shortlist" in page.locator("#shortlist-choice option:checked").inner_text()
    page.locator("#shortlist-status a").click()
    page.wait_for_selector("#compare-table")
    assert page.locator("#compare-table thead th.entry-head").count() == 3
    page.wait_for_function("() => window.liftmatchCharts && window.liftmatchCharts.charts['chart-gw']")
    counts = page.evaluate("""() => ['chart-power', 'chart-gw'].map(id => {
        const sets = window.liftmatchCharts.charts[id].data.datasets;
        return [sets.filter(d => d.showLine && d.label !== 'required thrust').length,
                sets.filter(d => d.label === 'required thrust').length];
    })""")
    assert counts == [[3, 1], [3, 1]]
    screenshot(page, "ranking-shortlist-compare")
    page.goto(f"{live_server}/shortlists")  # three adds from rows, one shortlist
    assert page.locator("#shortlist-list a", has_text="Q4 mapping survey shortlist").count() == 1
    assert page.js_errors == []
    assert time.monotonic() - started < 90
