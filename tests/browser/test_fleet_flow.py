"""Real browser: plan the demo fleet (three airframes) and read the plan and its trade-off chart."""

from __future__ import annotations

from typing import Any

import pytest

from tests.browser.conftest import screenshot
from tests.browser.test_shortlist_flow import log_in

pytestmark = pytest.mark.browser


def test_demo_fleet_plan(live_server: str, page: Any) -> None:
    log_in(page, live_server)
    page.goto(f"{live_server}/fleet-plans")
    for name in ("Q4 mapping survey", "H6 structure inspection", "V1 corridor cruise"):
        page.get_by_label(f"Include {name}", exact=True).check()
    page.fill("#candidates_per_mission", "60")
    page.click("#fleet-form button[type=submit]")
    page.wait_for_selector("#fleet-result", timeout=90_000)
    assert page.locator("#assignments tbody tr").count() == 3
    page.wait_for_function("() => window.liftmatchCharts && window.liftmatchCharts.charts['chart-tradeoff']")
    points = page.evaluate("() => window.liftmatchCharts.charts['chart-tradeoff'].data.datasets[0].data.length")
    assert points >= 2
    screenshot(page, "fleet-plan")
    assert page.js_errors == []
