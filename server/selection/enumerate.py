"""Enumerate candidates (pack x k in parallel x ESC x motor x propeller) in compatible blocks, and chunk them.

Incompatible combinations are counted, never materialised. Packs are grouped by cell count S; for each group
the compatible ESCs (``min_cells <= S <= max_cells``) and motors (``S <= max_cells``) are fixed, so a block is
a dense cube with axes (pack configuration, ESC, motor, propeller) that holds only compatible candidates.
Propellers over the airframe's diameter limit, those made for the other kind of flight (and, for cruise, those
without forward data) are dropped from every block. A chunk is a slab of a block: a range of pack configurations
and of ESCs with all motors and propellers, about ``chunk_size`` candidates (at least one motor x propeller plane).
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np

from server.physics import sizing
from server.physics.battery import open_circuit_voltage_per_cell_v
from server.physics.drive_screen import Batch
from server.physics.propeller_segments import PropModel

from .constraints import CODE, PRUNE_REASONS
from .library import EscLibrary, MissionSpec, MotorLibrary, PartsLibrary

DEFAULT_CHUNK_SIZE = 65_536


@dataclass(frozen=True)
class Block:
    """A dense cube of compatible candidates; axes (configuration, ESC, motor, propeller)."""

    cells: float
    packs: np.ndarray
    ks: np.ndarray
    escs: np.ndarray
    motors: np.ndarray
    props: np.ndarray

    @property
    def shape(self) -> tuple[int, int, int, int]:
        return len(self.packs), len(self.escs), len(self.motors), len(self.props)

    @property
    def size(self) -> int:
        return int(np.prod(self.shape, dtype=np.int64))


@dataclass(frozen=True)
class Chunk:
    """A slab of a block: configurations ``c0:c1`` and ESCs ``e0:e1``, every motor and propeller."""

    block: int
    c0: int
    c1: int
    e0: int
    e1: int


@dataclass(frozen=True)
class Plan:
    """What will be evaluated, and how many combinations each prune reason removed."""

    combinations: int
    pruned: dict[str, int]
    blocks: tuple[Block, ...]

    @property
    def evaluated(self) -> int:
        return sum(b.size for b in self.blocks)


@dataclass(frozen=True)
class PartVerdicts:
    """What the part data alone decide (the part-level reasons of :data:`.constraints.PRUNE_REASONS`).

    Masks per pack, ESC, motor (data known) and per propeller (which part-level reason removes it, in order).
    """

    pack_ok: np.ndarray
    esc_ok: np.ndarray
    motor_ok: np.ndarray
    prop_missing: np.ndarray
    prop_invalid: np.ndarray
    prop_large: np.ndarray
    prop_misapplied: np.ndarray
    prop_no_forward: np.ndarray

    @classmethod
    def of(cls, library: PartsLibrary, mission: MissionSpec, model: PropModel) -> PartVerdicts:
        props = library.propellers
        missing = ~props.valid() | ((mission.kind != "cruise") & ~model.has_table)  # multirotor: static table
        invalid = ~missing & model.has_table & ~model.valid
        large = ~missing & ~invalid & ~(props.diameter_in <= mission.max_prop_diameter_in)
        misapplied = ~missing & ~invalid & ~large & ~props.suits(mission.kind)
        return cls(pack_ok=library.packs.valid(), esc_ok=library.escs.valid(), motor_ok=library.motors.valid(),
                   prop_missing=missing, prop_invalid=invalid, prop_large=large, prop_misapplied=misapplied,
                   prop_no_forward=~missing & ~invalid & ~large & ~misapplied & ~model.has_table)

    @property
    def prop_use(self) -> np.ndarray:
        use: np.ndarray = (~self.prop_missing & ~self.prop_invalid & ~self.prop_large & ~self.prop_misapplied
                           & ~self.prop_no_forward)
        return use

    @staticmethod
    def esc_fits(escs: EscLibrary, esc: np.ndarray, cells: np.ndarray) -> np.ndarray:
        """The ESC supports the pack's cell count: ``min_cells <= S <= max_cells``."""
        fits: np.ndarray = (escs.min_cells[esc] <= cells) & (cells <= escs.max_cells[esc])
        return fits

    @staticmethod
    def motor_fits(motors: MotorLibrary, motor: np.ndarray, cells: np.ndarray) -> np.ndarray:
        """The pack's cell count is within the motor's maximum: ``S <= max_cells``."""
        fits: np.ndarray = cells <= motors.max_cells[motor]
        return fits

    def first_failure(self, library: PartsLibrary, pack: np.ndarray, esc: np.ndarray, motor: np.ndarray,
                      prop: np.ndarray) -> np.ndarray:
        """Code (:data:`.constraints.CODE`) of the first part-level reason each candidate fails, 0 if none."""
        cells = library.packs.cells_series[pack]
        tests = [
            ("missing_data", ~(self.pack_ok[pack] & self.esc_ok[esc] & self.motor_ok[motor])
             | self.prop_missing[prop]),
            ("prop_data_invalid", self.prop_invalid[prop]),
            ("prop_too_large", self.prop_large[prop]),
            ("prop_application", self.prop_misapplied[prop]),
            ("no_forward_table", self.prop_no_forward[prop]),
            ("esc_cell_range", ~self.esc_fits(library.escs, esc, cells)),
            ("motor_cell_limit", ~self.motor_fits(library.motors, motor, cells)),
        ]
        shape = np.broadcast_shapes(*(np.shape(bad) for _, bad in tests))
        code = np.zeros(shape, dtype=np.uint8)
        for name, bad in reversed(tests):
            np.copyto(code, CODE[name], where=np.broadcast_to(bad, shape))
        return code


def plan(library: PartsLibrary, mission: MissionSpec, model: PropModel) -> Plan:
    """Group the library into compatible blocks and count the pruned combinations per reason."""
    packs, escs, motors, props = library.packs, library.escs, library.motors, library.propellers
    k_max = int(mission.max_packs_in_parallel)
    combinations = k_max * len(packs) * len(escs) * len(motors) * len(props)
    v = PartVerdicts.of(library, mission, model)
    n_p, n_e, n_m = int(v.pack_ok.sum()), int(v.esc_ok.sum()), int(v.motor_ok.sum())
    prop_use = v.prop_use
    n_q_ok = int(prop_use.sum())
    pruned = dict.fromkeys(PRUNE_REASONS, 0)
    complete = k_max * n_p * n_e * n_m  # combinations of packs, ESCs and motors with known data, per propeller
    pruned["missing_data"] = combinations - complete * int((~v.prop_missing).sum())
    pruned["prop_data_invalid"] = complete * int(v.prop_invalid.sum())
    pruned["prop_too_large"] = complete * int(v.prop_large.sum())
    pruned["prop_application"] = complete * int(v.prop_misapplied.sum())
    pruned["no_forward_table"] = complete * int(v.prop_no_forward.sum())
    blocks = []
    valid_packs = np.flatnonzero(v.pack_ok)
    esc_idx, motor_idx, prop_idx = np.flatnonzero(v.esc_ok), np.flatnonzero(v.motor_ok), np.flatnonzero(prop_use)
    for cells in np.unique(packs.cells_series[valid_packs]):
        group = valid_packs[packs.cells_series[valid_packs] == cells]
        e_fit = esc_idx[v.esc_fits(escs, esc_idx, np.asarray(cells))]
        m_fit = motor_idx[v.motor_fits(motors, motor_idx, np.asarray(cells))]
        per_pack = k_max * n_q_ok
        pruned["esc_cell_range"] += len(group) * per_pack * (n_e - len(e_fit)) * n_m
        pruned["motor_cell_limit"] += len(group) * per_pack * len(e_fit) * (n_m - len(m_fit))
        if len(e_fit) and len(m_fit) and len(prop_idx):
            config_packs = np.repeat(group, k_max)
            config_ks = np.tile(np.arange(1, k_max + 1), len(group))
            blocks.append(Block(float(cells), config_packs, config_ks, e_fit, m_fit, prop_idx))
    return Plan(combinations=combinations, pruned=pruned, blocks=tuple(blocks))


def chunks(the_plan: Plan, chunk_size: int = DEFAULT_CHUNK_SIZE) -> Iterator[Chunk]:
    """Slabs of about ``chunk_size`` candidates, in a fixed order (block, ESC range, configuration range)."""
    for b, block in enumerate(the_plan.blocks):
        n_c, n_e, n_m, n_q = block.shape
        plane = n_m * n_q
        e_step = max(1, min(n_e, chunk_size // max(plane, 1)))
        c_step = max(1, chunk_size // max(plane * e_step, 1))
        for e0 in range(0, n_e, e_step):
            for c0 in range(0, n_c, c_step):
                yield Chunk(b, c0, min(c0 + c_step, n_c), e0, min(e0 + e_step, n_e))


def batch_for(library: PartsLibrary, mission: MissionSpec, pack: np.ndarray, k: np.ndarray, esc: np.ndarray,
              motor: np.ndarray, prop: np.ndarray) -> Batch:
    """Parameters of the candidates ``(pack, k, esc, motor, prop)``; index arrays broadcast together.

    Cube layout: pass ``pack``/``k`` shaped (C, 1, 1, 1), ``esc`` (1, E, 1, 1), ``motor`` (1, 1, M, 1) and
    ``prop`` (1, 1, 1, Q); flat lists: all (n,). The arithmetic is the same either way, so a candidate gets
    bit-identical numbers in a block and in a list.
    """
    pk, es, mo, pr = library.packs, library.escs, library.motors, library.propellers
    n_r = float(mission.rotor_count)
    cells = pk.cells_series[pack]
    full_v = pk.full_voltage_per_cell_v[pack]
    kf = np.asarray(k, dtype=np.float64)
    capacity = pk.capacity_ah[pack] * kf
    constants = es.constants
    mass = sizing.all_up_mass_kg(mission.frame_mass_kg + mission.payload_kg, kf, pk.mass_kg[pack], n_r,
                                 es.mass_kg[esc], mo.mass_kg[motor], pr.mass_kg[prop])
    return Batch(
        voc_cruise_v=cells * open_circuit_voltage_per_cell_v(mission.cruise_state_of_charge, full_v),
        voc_low_v=cells * open_circuit_voltage_per_cell_v(mission.low_state_of_charge, full_v),
        voc_full_v=cells * open_circuit_voltage_per_cell_v(1.0, full_v),
        pack_resistance_ohm=cells * pk.cell_resistance_ohm[pack] / (pk.cells_parallel[pack] * kf),
        capacity_ah=capacity,
        pack_limit_a=mission.pack_current_fraction * pk.max_continuous_c[pack] * capacity,
        r_on_ohm=constants.on_path_resistance_ohm[esc],
        switching_coef=constants.switching_per_v_a[esc],
        dead_time_coef_v=constants.dead_time_v[esc],
        ripple_coef_s2=constants.ripple_s2[esc],
        esr_ohm=constants.input_esr_ohm[esc],
        k_pwm=constants.pwm_loss_coefficient[esc],
        esc_rating_a=es.continuous_current_a[esc],
        kv_si=mo.kv_rpm_per_v[motor] * (2.0 * np.pi / 60.0),
        motor_resistance_ohm=mo.resistance_ohm[motor],
        no_load_current_a=mo.no_load_current_a[motor],
        inductance_h=mo.inductance_h[motor],
        motor_rating_a=mo.max_current_a[motor],
        thermal_resistance_k_per_w=mo.thermal_resistance_k_per_w[motor],  # type: ignore[index]  # set in init
        thermal_time_constant_s=mo.thermal_time_constant_s[motor],  # type: ignore[index]
        max_winding_temperature_c=mo.max_winding_temperature_c[motor],  # type: ignore[index]
        q=np.asarray(prop, dtype=np.intp),
        mass_kg=mass,
        cells_series=cells,
        full_voltage_per_cell_v=full_v,
    )


def chunk_indices(block: Block, chunk: Chunk) -> tuple[np.ndarray, ...]:
    """Cube-shaped global index arrays (pack, k, esc, motor, prop) of a chunk."""
    c = slice(chunk.c0, chunk.c1)
    e = slice(chunk.e0, chunk.e1)
    return (block.packs[c].reshape(-1, 1, 1, 1), block.ks[c].reshape(-1, 1, 1, 1),
            block.escs[e].reshape(1, -1, 1, 1), block.motors.reshape(1, 1, -1, 1), block.props.reshape(1, 1, 1, -1))


def cost_of(library: PartsLibrary, mission: MissionSpec, pack: np.ndarray, k: np.ndarray, esc: np.ndarray,
            motor: np.ndarray, prop: np.ndarray) -> np.ndarray:
    """Cost of the candidates (k packs + one ESC, motor and propeller per rotor); NaN when a price is unknown."""
    cost: np.ndarray = sizing.system_cost(np.asarray(k, dtype=np.float64), library.packs.cost[pack],
                                          float(mission.rotor_count), library.escs.cost[esc],
                                          library.motors.cost[motor], library.propellers.cost[prop])
    return cost
