"""The parts library: battery packs, ESCs, motors and propellers (team-owned, versioned)."""

from __future__ import annotations

from typing import Any

from sqlalchemy import JSON, BigInteger, Boolean, Float, ForeignKey, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column

from server.db import Base
from server.models._common import TeamOwned, Timestamped, Versioned


class PartColumns(TeamOwned, Timestamped, Versioned):
    """Columns every part kind has."""

    name: Mapped[str] = mapped_column(String(120))
    maker: Mapped[str] = mapped_column(String(120), default="")
    part_number: Mapped[str] = mapped_column(String(80), default="")
    unit_cost: Mapped[float | None] = mapped_column(Float, nullable=True)
    currency: Mapped[str] = mapped_column(String(3), default="EUR")
    mass_g: Mapped[float] = mapped_column(Float)
    notes: Mapped[str] = mapped_column(Text, default="")
    archived: Mapped[bool] = mapped_column(Boolean, default=False)
    created_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id", ondelete="SET NULL"), nullable=True)
    updated_by_id: Mapped[int | None] = mapped_column(ForeignKey("user_account.id", ondelete="SET NULL"), nullable=True)


class Battery(PartColumns, Base):
    """One pack as sold; pack resistance = S·r_cell/P."""

    __tablename__ = "battery"

    chemistry: Mapped[str] = mapped_column(String(8), default="lipo")
    cells_series: Mapped[int] = mapped_column(Integer)
    cells_parallel: Mapped[int] = mapped_column(Integer, default=1)
    capacity_mah: Mapped[float] = mapped_column(Float)
    cell_resistance_mohm: Mapped[float] = mapped_column(Float)
    max_continuous_c: Mapped[float] = mapped_column(Float)
    max_burst_c: Mapped[float | None] = mapped_column(Float, nullable=True)


class Esc(PartColumns, Base):
    """An ESC; null loss parameters take the engine defaults (docs/model-reference.md#esc)."""

    __tablename__ = "esc"

    continuous_current_a: Mapped[float] = mapped_column(Float)
    burst_current_a: Mapped[float | None] = mapped_column(Float, nullable=True)
    min_cells: Mapped[int] = mapped_column(Integer)
    max_cells: Mapped[int] = mapped_column(Integer)
    pwm_frequency_khz: Mapped[float | None] = mapped_column(Float, nullable=True)
    r_on_path_ohm: Mapped[float | None] = mapped_column(Float, nullable=True)
    switching_time_ns: Mapped[float | None] = mapped_column(Float, nullable=True)
    dead_time_ns: Mapped[float | None] = mapped_column(Float, nullable=True)
    diode_drop_v: Mapped[float | None] = mapped_column(Float, nullable=True)
    input_esr_ohm: Mapped[float | None] = mapped_column(Float, nullable=True)
    k_pwm: Mapped[float | None] = mapped_column(Float, nullable=True)


class Motor(PartColumns, Base):
    """A brushless motor (first-order model: Kv, line-to-line R, I0)."""

    __tablename__ = "motor"

    kv_rpm_per_v: Mapped[float] = mapped_column(Float)
    winding_resistance_ohm: Mapped[float | None] = mapped_column(Float, nullable=True)
    no_load_current_a: Mapped[float | None] = mapped_column(Float, nullable=True)
    no_load_test_voltage_v: Mapped[float | None] = mapped_column(Float, nullable=True)
    max_current_a: Mapped[float | None] = mapped_column(Float, nullable=True)
    max_power_w: Mapped[float | None] = mapped_column(Float, nullable=True)
    max_cells: Mapped[int | None] = mapped_column(Integer, nullable=True)
    inductance_uh: Mapped[float | None] = mapped_column(Float, nullable=True)
    thermal_resistance_k_per_w: Mapped[float | None] = mapped_column(Float, nullable=True)
    thermal_time_constant_s: Mapped[float | None] = mapped_column(Float, nullable=True)
    max_winding_temperature_c: Mapped[float | None] = mapped_column(Float, nullable=True)


class Propeller(PartColumns, Base):
    """A propeller with static coefficients (constants or a table vs rpm) and optional forward data vs J."""

    __tablename__ = "propeller"

    diameter_in: Mapped[float] = mapped_column(Float)
    pitch_in: Mapped[float] = mapped_column(Float)
    blades: Mapped[int] = mapped_column(Integer, default=2)
    ct: Mapped[float | None] = mapped_column(Float, nullable=True)
    cp: Mapped[float | None] = mapped_column(Float, nullable=True)
    static_table: Mapped[list[dict[str, Any]] | None] = mapped_column(JSON, nullable=True)
    forward_table: Mapped[list[dict[str, Any]] | None] = mapped_column(JSON, nullable=True)
    forward_table_rpm: Mapped[float | None] = mapped_column(Float, nullable=True)
    application: Mapped[str] = mapped_column(String(16), default="any", server_default="any")


PART_MODELS: dict[str, type[PartColumns]] = {
    "batteries": Battery,
    "escs": Esc,
    "motors": Motor,
    "propellers": Propeller,
}


class PartRevision(Base):
    """A token that changes with every write to a team's parts of one kind: the parts list's freshness signal.

    Written only by database triggers on the four part tables (migration ``3f0c7a9e2b51``): every INSERT, UPDATE
    and DELETE of a part row, whatever wrote it (this app, another process, a script, a cascade), sets the row's
    ``revision`` to a fresh random 64-bit value in the same transaction. So a token seen once never comes back
    (not after a restore, nor in another database), and reading it is one primary-key lookup however large the
    library (``server/services/page_cache.py``). No foreign key: the triggers write it while a team's rows go.
    """

    __tablename__ = "part_revision"

    team_id: Mapped[int] = mapped_column(Integer, primary_key=True, autoincrement=False)
    kind: Mapped[str] = mapped_column(String(16), primary_key=True)
    revision: Mapped[int] = mapped_column(BigInteger)
