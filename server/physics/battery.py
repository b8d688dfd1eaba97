"""Lithium-polymer / Li-ion pack: open-circuit voltage, resistance, ratings and rules.

Zeroth-order equivalent circuit: ``V_term = S OCV(SOC) - I R_pack`` with ``R_pack = S r_cell / P + R_wiring``.
A stiff bench supply is a pack with zero resistance (pass its voltage as the open-circuit voltage).

The default OCV curve is the commonly circulated hobby LiPo table (docs/model-reference.md#battery-pack-equations,
[MEM]: no measurement protocol known). Other chemistries are represented by **scaling that table** so that
100 % SOC reads the chemistry's full-charge voltage (LiHV 4.35 V, Li-ion 4.20 V) — an approximation of our own
[MEM] until a team measures its cells; pass a measured table to replace it.

References
----------
.. [1] M. Chen and G. A. Rincón-Mora, "Accurate Electrical Battery Model Capable of Predicting Runtime and
   I-V Performance", IEEE Trans. Energy Conversion 21(2):504-511, 2006, doi:10.1109/TEC.2006.874229.
.. [2] W. Peukert, "Über die Abhängigkeit der Kapazität von der Entladestromstärke bei Bleiakkumulatoren",
   Elektrotechnische Zeitschrift 18 (1897) 287-288.
.. [3] G. L. Plett, *Battery Management Systems, Vol. I: Battery Modeling*, Artech House, 2015.
"""

from __future__ import annotations

from dataclasses import dataclass, fields

import numpy as np

from ._types import SECONDS_PER_HOUR_S, ArrayLike, FloatArray, IntArray, Status, as_float_array

# Hobby LiPo resting voltage per cell versus SOC (ascending SOC for numpy.interp) [MEM].
LIPO_OCV_SOC: FloatArray = np.linspace(0.0, 1.0, 21)
LIPO_OCV_V_PER_CELL: FloatArray = np.array([
    3.27, 3.61, 3.69, 3.71, 3.73, 3.75, 3.77, 3.79, 3.80, 3.82, 3.84,
    3.85, 3.87, 3.91, 3.95, 3.98, 4.02, 4.08, 4.11, 4.15, 4.20])
LIPO_FULL_V_PER_CELL = 4.20  # [MEM] industry charge voltage
LIHV_FULL_V_PER_CELL = 4.35  # [MEM]
LIPO_NOMINAL_V_PER_CELL = 3.7  # [MEM]
LIHV_NOMINAL_V_PER_CELL = 3.8  # [MEM]
CELL_VOLTAGES_V: dict[str, tuple[float, float]] = {
    "lipo": (LIPO_FULL_V_PER_CELL, LIPO_NOMINAL_V_PER_CELL),
    "lihv": (LIHV_FULL_V_PER_CELL, LIHV_NOMINAL_V_PER_CELL),
    "liion": (LIPO_FULL_V_PER_CELL, LIPO_NOMINAL_V_PER_CELL),
}
"""(full-charge, nominal) voltage per cell of each chemistry [MEM]; Li-ion is read on the LiPo table."""
DEFAULT_USABLE_FRACTION = 0.8  # [CP] land at 20 % SOC
DEFAULT_CUTOFF_V_PER_CELL = 3.3  # [MEM] typical flight-controller under-load cut-off


@dataclass(frozen=True)
class PackParams:
    """A battery pack; every field broadcasts over candidates.

    Parameters
    ----------
    cells_series : array_like
        Cells in series S. [-]
    capacity_ah : array_like
        Rated pack capacity (all parallel strings together). [Ah]
    cell_resistance_ohm : array_like
        DC internal resistance per cell r. [Ω]
    cells_parallel : array_like, default 1
        Parallel strings P. [-]
    wiring_resistance_ohm : array_like, default 0
        Leads and connectors, added to the pack resistance. [Ω]
    full_voltage_per_cell_v : array_like, default 4.20
        OCV at 100 % SOC; the hobby table is scaled to it [MEM]. [V]
    usable_fraction : array_like, default 0.8
        Fraction of rated capacity one may use. [-]
    cutoff_voltage_per_cell_v : array_like, default 3.3
        Under-load terminal-voltage cut-off per cell. [V]
    peukert_exponent : array_like, default 1
        Peukert k; 1 disables the rate correction. [-]
    peukert_rated_hours_h : array_like, default 1
        Discharge time H at which ``capacity_ah`` is rated. [h]
    """

    cells_series: FloatArray
    capacity_ah: FloatArray
    cell_resistance_ohm: FloatArray
    # Defaults are plain floats (the ignores): __post_init__ turns every field into a float64 array.
    cells_parallel: FloatArray = 1.0  # type: ignore[assignment]
    wiring_resistance_ohm: FloatArray = 0.0  # type: ignore[assignment]
    full_voltage_per_cell_v: FloatArray = LIPO_FULL_V_PER_CELL  # type: ignore[assignment]
    usable_fraction: FloatArray = DEFAULT_USABLE_FRACTION  # type: ignore[assignment]
    cutoff_voltage_per_cell_v: FloatArray = DEFAULT_CUTOFF_V_PER_CELL  # type: ignore[assignment]
    peukert_exponent: FloatArray = 1.0  # type: ignore[assignment]
    peukert_rated_hours_h: FloatArray = 1.0  # type: ignore[assignment]

    def __post_init__(self) -> None:
        for f in fields(self):
            object.__setattr__(self, f.name, as_float_array(getattr(self, f.name)))

    @property
    def resistance_ohm(self) -> FloatArray:
        """Pack resistance ``S r / P + R_wiring``. [Ω]"""
        return pack_resistance_ohm(self.cells_series, self.cell_resistance_ohm, self.cells_parallel,
                                   self.wiring_resistance_ohm)

    def open_circuit_voltage_v(self, state_of_charge: ArrayLike) -> FloatArray:
        """Pack open-circuit voltage ``S OCV(SOC)`` on the (scaled) hobby table. [V]"""
        return self.cells_series * open_circuit_voltage_per_cell_v(state_of_charge, self.full_voltage_per_cell_v)


def open_circuit_voltage_per_cell_v(state_of_charge: ArrayLike,
                                    full_voltage_per_cell_v: ArrayLike = LIPO_FULL_V_PER_CELL) -> FloatArray:
    """Resting cell voltage by linear interpolation in the hobby LiPo table, scaled to the full voltage.

    Parameters
    ----------
    state_of_charge : array_like
        SOC, 0..1 (clamped to the table outside). [-]
    full_voltage_per_cell_v : array_like, default 4.20
        Cell voltage at 100 % SOC; the whole table is multiplied by ``full / 4.20`` [MEM]. [V]

    Returns
    -------
    ndarray
        Open-circuit voltage per cell; NaN for NaN SOC. [V]
    """
    soc = as_float_array(state_of_charge)
    scale = as_float_array(full_voltage_per_cell_v) / LIPO_FULL_V_PER_CELL
    return np.interp(soc, LIPO_OCV_SOC, LIPO_OCV_V_PER_CELL) * scale


def full_voltage_per_cell_v(chemistry: str) -> float:
    """Full-charge cell voltage of a chemistry (``lipo``, ``lihv``, ``liion``). [V]"""
    return CELL_VOLTAGES_V[chemistry][0]


def nominal_voltage_per_cell_v(full_voltage_per_cell_v_: ArrayLike) -> FloatArray:
    """Nominal cell voltage of the chemistry whose full-charge voltage is given (LiHV 3.8 V, else 3.7 V). [V]

    Display only (the pack's label voltage ``S V_nom``); the physics uses the OCV curve.
    """
    full = as_float_array(full_voltage_per_cell_v_)
    return np.where(full > 0.5 * (LIPO_FULL_V_PER_CELL + LIHV_FULL_V_PER_CELL), LIHV_NOMINAL_V_PER_CELL,
                    LIPO_NOMINAL_V_PER_CELL)


def mean_open_circuit_voltage_per_cell_v(soc_low: ArrayLike, soc_high: ArrayLike) -> FloatArray:
    """Exact mean of the piecewise-linear hobby table between two SOCs (trapezoid on the knots). [V]"""
    lo, hi = np.broadcast_arrays(as_float_array(soc_low), as_float_array(soc_high))
    lo, hi = np.clip(lo, 0.0, 1.0), np.clip(hi, 0.0, 1.0)

    def cumulative(s: FloatArray) -> FloatArray:
        # Integral of the piecewise-linear table from 0 to s, knot by knot.
        knots = LIPO_OCV_SOC
        values = LIPO_OCV_V_PER_CELL
        seg = np.clip(s[..., np.newaxis] - knots[:-1], 0.0, np.diff(knots))
        slope = np.diff(values) / np.diff(knots)
        integral: FloatArray = np.sum(values[:-1] * seg + 0.5 * slope * seg**2, axis=-1)
        return integral

    with np.errstate(invalid="ignore", divide="ignore"):
        mean: FloatArray = (cumulative(hi) - cumulative(lo)) / (hi - lo)
        return mean


def chen_rincon_mora_ocv_v(state_of_charge: ArrayLike) -> FloatArray:
    """Fitted OCV of one polymer Li-ion cell (Chen & Rincón-Mora 2006). [V]

    ``V_oc(s) = -1.031 exp(-35 s) + 3.685 + 0.2156 s - 0.1178 s^2 + 0.3201 s^3``. Full charge is 4.10 V:
    a fit to one cell, not a LiPo standard.
    """
    s = as_float_array(state_of_charge)
    return -1.031 * np.exp(-35.0 * s) + 3.685 + 0.2156 * s - 0.1178 * s**2 + 0.3201 * s**3


def chen_rincon_mora_series_resistance_ohm(state_of_charge: ArrayLike) -> FloatArray:
    """Series resistance of the same small cell ``R_s(s) = 0.1562 exp(-24.37 s) + 0.07446``. [Ω]"""
    return 0.1562 * np.exp(-24.37 * as_float_array(state_of_charge)) + 0.07446


def pack_voltage_v(cells_series: ArrayLike, voltage_per_cell_v: ArrayLike) -> FloatArray:
    """Pack voltage from a per-cell voltage ``S V_cell`` (full 4.20, nominal 3.7, landing 3.5 V ...). [V]"""
    return as_float_array(cells_series) * as_float_array(voltage_per_cell_v)


def pack_resistance_ohm(cells_series: ArrayLike, cell_resistance_ohm: ArrayLike, cells_parallel: ArrayLike = 1.0,
                        wiring_resistance_ohm: ArrayLike = 0.0) -> FloatArray:
    """Pack resistance ``S r / P + R_wiring``. [Ω]"""
    return (as_float_array(cells_series) * as_float_array(cell_resistance_ohm) / as_float_array(cells_parallel)
            + as_float_array(wiring_resistance_ohm))


def nominal_energy_wh(cells_series: ArrayLike, capacity_ah: ArrayLike,
                      nominal_voltage_per_cell_v: ArrayLike = LIPO_NOMINAL_V_PER_CELL) -> FloatArray:
    """Nominal pack energy ``S V_nom C``. [Wh]"""
    return pack_voltage_v(cells_series, nominal_voltage_per_cell_v) * as_float_array(capacity_ah)


def simple_endurance_s(energy_wh: ArrayLike, power_w: ArrayLike,
                       usable_fraction: ArrayLike = DEFAULT_USABLE_FRACTION) -> FloatArray:
    """Energy rule of thumb ``t = usable E / P`` (no sag, no losses; common practice). [s]"""
    return SECONDS_PER_HOUR_S * as_float_array(energy_wh) * as_float_array(usable_fraction) / as_float_array(power_w)


def max_continuous_current_a(capacity_ah: ArrayLike, c_rating: ArrayLike) -> FloatArray:
    """C-rating limit ``I_max = C x capacity`` (hobby ratings are optimistic: plan 50-80 % [CP]). [A]"""
    return as_float_array(capacity_ah) * as_float_array(c_rating)


def pack_mass_kg(energy_wh: ArrayLike, specific_energy_wh_per_kg: ArrayLike) -> FloatArray:
    """Pack mass estimate ``E / e_spec``. [kg]"""
    return as_float_array(energy_wh) / as_float_array(specific_energy_wh_per_kg)


def peukert_runtime_s(capacity_ah: ArrayLike, current_a: ArrayLike, peukert_exponent: ArrayLike = 1.0,
                      rated_hours_h: ArrayLike = 1.0) -> FloatArray:
    """Peukert run time at constant current ``t = H (C / (I H))^k`` (Peukert 1897). [s]"""
    h = as_float_array(rated_hours_h)
    ratio = as_float_array(capacity_ah) / (as_float_array(current_a) * h)
    return SECONDS_PER_HOUR_S * h * ratio ** as_float_array(peukert_exponent)


def peukert_effective_current_a(current_a: ArrayLike, capacity_ah: ArrayLike, peukert_exponent: ArrayLike = 1.0,
                                rated_hours_h: ArrayLike = 1.0) -> FloatArray:
    """Current at which rated capacity is consumed under Peukert ``I (I H / C)^(k - 1)``. [A]

    Integrating ``dSOC/dt = -I_eff / (3600 C)`` at constant I gives Peukert's run time exactly.
    """
    i = as_float_array(current_a)
    rate = i * as_float_array(rated_hours_h) / as_float_array(capacity_ah)
    return i * np.abs(rate) ** (as_float_array(peukert_exponent) - 1.0)


def terminal_voltage_v(open_circuit_voltage_v: ArrayLike, current_a: ArrayLike,
                       resistance_ohm: ArrayLike) -> FloatArray:
    """Terminal voltage under load ``V_oc - I R``. [V]"""
    return as_float_array(open_circuit_voltage_v) - as_float_array(current_a) * as_float_array(resistance_ohm)


def current_for_power_a(open_circuit_voltage_v: ArrayLike, resistance_ohm: ArrayLike,
                        power_w: ArrayLike) -> tuple[FloatArray, IntArray]:
    """Pack current that delivers a terminal power P (the high-voltage root).

    ``I = [V_oc - sqrt(V_oc^2 - 4 R P)] / (2 R)``, written in the cancellation-free form
    ``2 P / (V_oc + sqrt(V_oc^2 - 4 R P))`` so that R = 0 gives ``P / V_oc``.

    Parameters
    ----------
    open_circuit_voltage_v : array_like
        Pack open-circuit voltage. [V]
    resistance_ohm : array_like
        Pack resistance. [Ω]
    power_w : array_like
        Power at the pack terminals. [W]

    Returns
    -------
    current_a : ndarray
        Pack current; NaN where the pack cannot deliver P. [A]
    status : ndarray of int8
        ``Status.OK``, ``Status.POWER_LIMIT`` (no real root) or ``Status.NON_FINITE``.
    """
    v, r, p = np.broadcast_arrays(as_float_array(open_circuit_voltage_v), as_float_array(resistance_ohm),
                                  as_float_array(power_w))
    disc = v * v - 4.0 * r * p
    finite = np.isfinite(v) & np.isfinite(r) & np.isfinite(p)
    ok = finite & (disc >= 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        current = np.where(ok, 2.0 * p / (v + np.sqrt(np.where(ok, disc, 0.0))), np.nan)
    status = np.where(finite, np.where(ok, Status.OK, Status.POWER_LIMIT), Status.NON_FINITE).astype(np.int8)
    return current, status
