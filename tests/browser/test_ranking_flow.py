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
    ranking_url = page.url
    # First row into a new shortlist, then two more rows into that shortlist.
    page.locator("#row-1 form.add-shortlist select").select_option(value="")
    page.locator("#row-1 form.add-shortlist button").click()
    page.wait_for_selector("#results .ok")
    page.goto(ranking_url)
    for rank in (2, 3):
        form = page.locator(f"#row-{rank} form.add-shortlist")
        form.locator("select").select_option(index=0)
        form.locator("button").click()
        page.wait_for_selector(f"#row-{rank} .ok")
    page.locator("#row-3 .ok a").click()
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
    assert page.js_errors == []
    assert time.monotonic() - started < 90
