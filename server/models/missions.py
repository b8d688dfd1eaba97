"""Airframes and the missions flown with them."""

from __future__ import annotations

from typing import Any

from sqlalchemy import JSON, Boolean, Float, ForeignKey, Integer, String, Text, false
from sqlalchemy.orm import Mapped, mapped_column, relationship

from server.db import Base
from server.models._common import TeamOwned, Timestamped, Versioned


class Airframe(TeamOwned, Timestamped, Versioned, Base):
    """An airframe; frame mass excludes motors, ESCs, propellers and packs."""

    __tablename__ = "airframe"

    name: Mapped[str] = mapped_column(String(120))
    rotor_count: Mapped[int] = mapped_column(Integer)
    frame_mass_g: Mapped[float] = mapped_column(Float)
    max_prop_diameter_in: Mapped[float | None] = mapped_column(Float, nullable=True)
    max_packs_in_parallel: Mapped[int] = mapped_column(Integer, default=1)
    drag_area_m2: Mapped[float | None] = mapped_column(Float, nullable=True)
    """Airframe drag area C_D A for multirotor forward flight and climb; None: not stated (no drag counted)."""
    frontal_area_note: Mapped[str] = mapped_column(Text, default="", server_default="")
    coaxial: Mapped[bool] = mapped_column(Boolean, default=False, server_default=false())
    """Rotors stacked in coaxial pairs (rotor_count counts both rotors of every pair)."""
    notes: Mapped[str] = mapped_column(Text, default="")

    missions: Mapped[list[Mission]] = relationship(back_populates="airframe", passive_deletes=True)


class Mission(TeamOwned, Timestamped, Versioned, Base):
    """What an airframe must do: hover or cruise point, conditions, and the limits a system must keep."""

    __tablename__ = "mission"

    name: Mapped[str] = mapped_column(String(120))
    airframe_id: Mapped[int] = mapped_column(ForeignKey("airframe.id", ondelete="RESTRICT"), index=True)
    kind: Mapped[str] = mapped_column(String(16))
    payload_mass_g: Mapped[float] = mapped_column(Float, default=0.0)
    altitude_m: Mapped[float] = mapped_column(Float, default=0.0)
    temperature_offset_c: Mapped[float] = mapped_column(Float, default=0.0)
    cruise_airspeed_m_s: Mapped[float | None] = mapped_column(Float, nullable=True)
    lift_to_drag: Mapped[float | None] = mapped_column(Float, nullable=True)
    min_thrust_to_weight: Mapped[float] = mapped_column(Float, default=2.0)
    duty_min: Mapped[float] = mapped_column(Float, default=0.40)
    duty_max: Mapped[float] = mapped_column(Float, default=0.75)
    min_endurance_min: Mapped[float] = mapped_column(Float, default=0.0)
    usable_fraction: Mapped[float] = mapped_column(Float, default=0.8)
    cutoff_v_per_cell: Mapped[float] = mapped_column(Float, default=3.3)
    esc_current_margin: Mapped[float] = mapped_column(Float, default=1.2)
    pack_current_fraction: Mapped[float] = mapped_column(Float, default=0.8)
    cruise_state_of_charge: Mapped[float] = mapped_column(Float, default=0.5)
    max_all_up_mass_g: Mapped[float | None] = mapped_column(Float, nullable=True)
    min_thrust_to_weight_motor_out: Mapped[float | None] = mapped_column(Float, nullable=True)
    climb_rate_m_s: Mapped[float] = mapped_column(Float, default=0.0, server_default="0")
    """Climb rate at the cruise point of a multirotor mission (negative: descent). [m/s]"""
    temperature_effects: Mapped[bool] = mapped_column(Boolean, default=False, server_default=false())
    burst_s: Mapped[float] = mapped_column(Float, default=0.0, server_default="0")
    cold_day_temperature_c: Mapped[float | None] = mapped_column(Float, nullable=True)
    segments: Mapped[list[dict[str, Any]]] = mapped_column(JSON, default=list, server_default="[]")
    """Flight profile (:class:`server.schemas.missions.SegmentIn` dicts, flown in order); empty: single point."""
    reserve_min: Mapped[float] = mapped_column(Float, default=0.0, server_default="0")
    notes: Mapped[str] = mapped_column(Text, default="")

    airframe: Mapped[Airframe] = relationship(back_populates="missions")
