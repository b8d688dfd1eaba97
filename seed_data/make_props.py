"""Generate the invented demo propellers' coefficient data (CT/CP in seed_data/northfold.json).

INVENTED DEMO DATA, never a check value. The shapes imitate what the UIUC Propeller Database shows for small
two-blade propellers (tests/data/reference/propellers, see its PROVENANCE.md); the numbers are our own:

- static: each propeller gets a middle thrust coefficient ``CT`` (the part's ``ct``) and a middle static figure
  of merit ``FM`` (multirotor props 0.64-0.67, growing with diameter, and 0.55 for the 5-inch prop; thin
  fixed-wing props 0.62-0.635, like the UIUC Vol. 1 slow-flyer 10x7 static rows in docs/model-reference.md). Across
  the static table's rpm range CT rises 6 % and FM rises by 0.06 (a Reynolds-number effect), and
  ``CP = sqrt(2/pi) CT^1.5 / FM`` (docs/model-reference.md#propeller-equations), so CP stays nearly flat, as in
  the UIUC static files. Every FM lies inside the range of the UIUC static files in the repository (checked by
  tests/services/test_demo_data.py);
- forward (fixed-wing props only, at ``forward_table_rpm``): with ``x = J / J0`` and the zero-thrust advance
  ratio ``J0 = 1.2 P/D`` (the UIUC thin-electric 9x6 and 10x7 runs cross zero thrust at 1.19 P/D),
  ``CT = CT_s (1 - 0.772 x^2 - 1.468 x^3 + 1.240 x^4)`` (flat at J = 0, zero at x = 1) and
  ``CP = CP_s (1 - 0.8 ((x - 0.35)/0.65)^1.6)`` above x = 0.35 (flat below): CT least-squares fitted, CP by eye,
  to the four UIUC thin-electric 9x6 and 10x7 forward runs normalised by their static values (within 0.07);
  ``CT_s``, ``CP_s`` are the static values at the table's rpm. Rows every 0.05 in J from 0 up to the first row
  with CT < 0 (past the windmill point). The efficiency ``J CT / CP`` then peaks at 0.63-0.67 (the UIUC
  thin fixed-wing props peak at 0.68-0.69) and stays below the momentum (Froude) limit at every row.

Run: python seed_data/make_props.py  (rewrites ct, cp, static_table and forward_table of every propeller in
northfold.json), then python seed_data/make_sweeps.py (the synthetic sweeps use these tables).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
FM_FACTOR = math.sqrt(2.0 / math.pi)  # FM = sqrt(2/pi) CT^1.5 / CP (propeller coefficients)
CT_SPAN = 0.06  # CT rises 6 % across a static table
FM_SPAN = 0.06  # FM rises by this much across a static table
ZERO_THRUST_J_PER_PITCH_RATIO = 1.2
J_STEP = 0.05

# part number -> middle figure of merit (invented; ct stays the part's own middle CT)
MIDDLE_FM = {
    "NS-P5x2.5": 0.55, "NS-P10x4.5": 0.64, "NS-P11x4.5": 0.645, "NS-P12x4.5": 0.65, "NS-P13x4.4": 0.655,
    "NS-P15x5": 0.66, "NS-P16x5.4": 0.66, "NS-P17x5.8": 0.665, "NS-P18x6.1": 0.665, "NS-P20x6.5": 0.67,
    "NS-P22x7.2": 0.67, "NS-P28x9.2": 0.67, "NS-P30x10": 0.67,
    "NS-PF12x8": 0.62, "NS-PF13x8": 0.625, "NS-PF14x9": 0.62, "NS-PF15x10": 0.63, "NS-PF16x10": 0.635,
}


def power_coefficient(ct: float, fm: float) -> float:
    """CP of a static point with thrust coefficient ``ct`` and figure of merit ``fm``."""
    return float(FM_FACTOR * ct**1.5 / fm)


def static_rows(ct_mid: float, fm_mid: float, rpms: list[float]) -> list[dict[str, float]]:
    """Rows of a static table over ``rpms``: CT and FM rise linearly in rpm, centred on the middle row."""
    lo, hi = min(rpms), max(rpms)
    rows = []
    for rpm in rpms:
        s = (rpm - lo) / (hi - lo) - 0.5 if hi > lo else 0.0
        ct = ct_mid * (1.0 + CT_SPAN * s)
        fm = fm_mid + FM_SPAN * s
        rows.append({"rpm": rpm, "ct": round(ct, 4), "cp": round(power_coefficient(ct, fm), 4)})
    return rows


def forward_rows(ct_static: float, cp_static: float, pitch_ratio: float) -> list[dict[str, float]]:
    """CT and CP against J from 0 to the first row past zero thrust."""
    j0 = ZERO_THRUST_J_PER_PITCH_RATIO * pitch_ratio
    rows = []
    for k in range(200):
        j = round(k * J_STEP, 3)
        x = j / j0
        ct = ct_static * (1.0 - 0.772 * x**2 - 1.468 * x**3 + 1.240 * x**4)
        cp = cp_static * (1.0 - 0.8 * (max(x - 0.35, 0.0) / 0.65) ** 1.6)
        rows.append({"j": j, "ct": round(ct, 4), "cp": round(cp, 4)})
        if ct < 0:
            break
    return rows


def main() -> None:
    path = HERE / "northfold.json"
    data = json.loads(path.read_text())
    for prop in data["propellers"]:
        fm_mid = MIDDLE_FM[prop["part_number"]]
        ct_mid = prop["ct"]
        if prop.get("static_table"):
            rows = static_rows(ct_mid, fm_mid, [r["rpm"] for r in prop["static_table"]])
            prop["static_table"] = rows
            middle = rows[len(rows) // 2]
            prop["ct"], prop["cp"] = middle["ct"], middle["cp"]
        else:
            prop["cp"] = round(power_coefficient(ct_mid, fm_mid), 4)
        if prop.get("forward_table"):
            if prop.get("static_table"):
                table = prop["static_table"]
                rpm = prop["forward_table_rpm"]
                ct_s = float(np.interp(rpm, [r["rpm"] for r in table], [r["ct"] for r in table]))
                cp_s = float(np.interp(rpm, [r["rpm"] for r in table], [r["cp"] for r in table]))
            else:
                ct_s, cp_s = prop["ct"], prop["cp"]
            prop["forward_table"] = forward_rows(ct_s, cp_s, prop["pitch_in"] / prop["diameter_in"])
    path.write_text(json.dumps(data, indent=2, ensure_ascii=False) + "\n")


if __name__ == "__main__":
    main()
