"""The one near-limit rule (services.cautions) that the ranking page, the compare page and compare.json share."""

from __future__ import annotations

import pytest

from server.services.cautions import limit_uses, near_limit, summary


def test_uses_are_fractions_of_what_the_mission_allows() -> None:
    # ESC: rating 30 A, motor draws 24 A → ratio 1.25; allowed 30 / 1.2 = 25 A → 96 % used.
    uses = limit_uses({"motor_current_ratio": 0.5, "esc_rating_ratio": 1.25, "pack_current_ratio": None}, 1.2)
    assert uses == {"motor": 0.5, "esc": pytest.approx(0.96), "pack": None}


def test_near_and_over_the_limit() -> None:
    found = near_limit({"motor_current_ratio": 0.89, "esc_rating_ratio": 1.25, "pack_current_ratio": 1.1}, 1.2)
    assert [(c.part, c.over) for c in found] == [("pack", True), ("esc", False)]  # worst first; 89 % is not near
    assert found[0].text.startswith("pack above 110% of its allowed current")
    assert found[1].text.startswith("ESC at 96% of its allowed current")
    assert near_limit({"motor_current_ratio": 0.9}, 1.2)[0].text.startswith("motor at 90% of its maximum")
    assert near_limit({}, 1.2) == []


def test_summary_gives_one_line_per_part_kind() -> None:
    rows = [near_limit({"esc_rating_ratio": 1.2}, 1.2), near_limit({"esc_rating_ratio": 1.3}, 1.2),
            near_limit({"motor_current_ratio": 0.95}, 1.2), []]
    assert summary(rows) == ["motor at 95% of its maximum current (1 row)",
                             "ESC at 92–100% of its allowed current (2 rows)"]
