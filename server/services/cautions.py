"""Near-limit cautions: one rule for every page and API answer that marks a part run close to what it may take.

A part is *near its limit* when its full-throttle current uses at least ``NEAR_LIMIT`` of what the mission allows
(common practice, no source: leave about 10 % between the worst case and the limit), and *over* it above 100 %:

- motor: full-throttle motor current ÷ the motor's maximum current;
- ESC: full-throttle motor current ÷ (the ESC's continuous rating ÷ the mission's ESC margin);
- pack: full-throttle pack current ÷ (the mission's allowed share × the pack's continuous C rating × capacity).

The inputs are the ``margins`` every ranking row and compare entry carries (``motor_current_ratio``,
``esc_rating_ratio`` = rating ÷ motor current, ``pack_current_ratio``).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

NEAR_LIMIT = 0.9  # common practice, no source


@dataclass(frozen=True)
class Caution:
    """One part close to (or over) its limit: ``use`` is the fraction of the allowed current it draws."""

    part: str  # "motor" | "esc" | "pack"
    use: float
    text: str

    @property
    def over(self) -> bool:
        return self.use > 1.0

    def as_dict(self) -> dict[str, Any]:
        return {"part": self.part, "use": self.use, "over": self.over, "text": self.text}


def _number(value: Any) -> float | None:
    return float(value) if isinstance(value, int | float) and value == value else None


def limit_uses(margins: Mapping[str, Any], esc_current_margin: float) -> dict[str, float | None]:
    """Fraction of the allowed full-throttle current each part draws (None when a rating is unknown)."""
    esc_ratio = _number(margins.get("esc_rating_ratio"))
    return {
        "motor": _number(margins.get("motor_current_ratio")),
        "esc": None if not esc_ratio else esc_current_margin / esc_ratio,
        "pack": _number(margins.get("pack_current_ratio")),
    }


def near_limit(margins: Mapping[str, Any], esc_current_margin: float) -> list[Caution]:
    """The parts that run at ≥ ``NEAR_LIMIT`` of what they may take at full throttle, worst first."""
    out = []
    uses = limit_uses(margins, esc_current_margin)
    for part, use in uses.items():
        if use is None or use < NEAR_LIMIT:
            continue
        word = "above" if use > 1.0 else "at"
        if part == "motor":
            text = f"motor {word} {use:.0%} of its maximum current"
        elif part == "esc":
            text = (f"ESC {word} {use:.0%} of its allowed current (continuous rating ÷ the mission's "
                    f"{esc_current_margin:g} margin)")
        else:
            text = f"pack {word} {use:.0%} of its allowed current (the mission's share of its C rating)"
        out.append(Caution(part, use, text))
    return sorted(out, key=lambda c: -c.use)


PART_WORDS = {"motor": "motor at {} of its maximum current", "esc": "ESC at {} of its allowed current",
              "pack": "pack at {} of its allowed current"}


def summary(per_row: list[list[Caution]]) -> list[str]:
    """One line per part kind over many rows, e.g. "ESC at 92–100 % of its allowed current (5 rows)"."""
    out = []
    for part, words in PART_WORDS.items():
        uses = [c.use for row in per_row for c in row if c.part == part]
        if not uses:
            continue
        lo, hi = min(uses), max(uses)
        span = f"{lo:.0%}" if round(lo * 100) == round(hi * 100) else f"{lo * 100:.0f}–{hi:.0%}"
        rows = sum(1 for row in per_row if any(c.part == part for c in row))
        out.append(words.format(span) + f" ({rows} row{'s' if rows != 1 else ''})")
    return out
