"""The flight profile in the browser: the mission's profile editor, and the explain page's profile table and chart
(screen at 1400 px and print)."""

from __future__ import annotations

from typing import Any

import pytest

from tests.browser.conftest import screenshot
from tests.browser.test_shortlist_flow import log_in

pytestmark = pytest.mark.browser

MISSION = "Q4 mapping flight, full profile"
SYSTEM = {"batteries": "NS-B4S-5200", "escs": "NS-E20", "motors": "NS-M3508-460", "propellers": "NS-P13x4.4"}


def _id(page: Any, base: str, kind: str, part_number: str) -> int:
    items = page.request.get(f"{base}/api/v1/parts/{kind}?q={part_number}").json()["items"]
    return int(next(p["id"] for p in items if p["part_number"] == part_number))


def test_profile_editor_and_explained_profile(live_server: str, page: Any) -> None:
    page.set_viewport_size({"width": 1400, "height": 900})
    log_in(page, live_server)
    missions = page.request.get(f"{live_server}/api/v1/missions").json()
    mission = next(m for m in missions if m["name"] == MISSION)
    page.goto(f"{live_server}/missions/{mission['id']}/edit")
    editor = page.locator("#segments")
    assert editor.is_visible()
    assert page.input_value("input[name='segments-3-label']") == "survey legs"
    assert page.input_value("input[name='segments-3-distance_m']") == "3000"
    screenshot(page, "profile-editor")

    ids = {kind: _id(page, live_server, kind, number) for kind, number in SYSTEM.items()}
    page.goto(f"{live_server}/explain?mission_id={mission['id']}&battery_id={ids['batteries']}"
              f"&esc_id={ids['escs']}&motor_id={ids['motors']}&propeller_id={ids['propellers']}&packs_in_parallel=1")
    page.wait_for_selector("#profile")
    summary = page.inner_text("#profile")
    assert "Flies every segment" in summary and "lands with 39 % charge" in summary
    rows = page.locator("#profile-segments tbody tr")
    assert rows.count() == 8  # seven segments and the reserve
    assert "reserve" in rows.nth(7).inner_text()
    page.wait_for_function("() => window.liftmatchCharts && window.liftmatchCharts.charts['chart-profile']")
    check = page.locator("#checks tr", has_text="flight profile")
    assert "passes" in check.inner_text()
    screenshot(page, "explain-profile")
    page.emulate_media(media="print")
    screenshot(page, "explain-profile-print")
    assert not page.js_errors, page.js_errors
