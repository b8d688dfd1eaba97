"""Bench runs (measured sweeps) and their samples."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy import DateTime, Float, ForeignKey, Integer, String, Text
from sqlalchemy.orm import Mapped, mapped_column, relationship

from server.db import Base
from server.models._common import TeamOwned, utcnow


class BenchRun(TeamOwned, Base):
    """One thrust-stand sweep of a motor + propeller + ESC on a pack or a bench supply."""

    __tablename__ = "bench_run"

    name: Mapped[str] = mapped_column(String(160), default="")
    motor_id: Mapped[int] = mapped_column(ForeignKey("motor.id", ondelete="RESTRICT"), index=True)
    propeller_id: Mapped[int] = mapped_column(ForeignKey("propeller.id", ondelete="RESTRICT"), index=True)
    esc_id: Mapped[int] = mapped_column(ForeignKey("esc.id", ondelete="RESTRICT"), index=True)
    pack_id: Mapped[int | None] = mapped_column(ForeignKey("battery.id", ondelete="RESTRICT"), nullable=True)
    supply_voltage_v: Mapped[float | None] = mapped_column(Float, nullable=True)
    altitude_m: Mapped[float] = mapped_column(Float, default=0.0)
    air_temperature_c: Mapped[float | None] = mapped_column(Float, nullable=True)
    air_pressure_pa: Mapped[float | None] = mapped_column(Float, nullable=True)
    throttle_offset: Mapped[float] = mapped_column(Float, default=0.0)
    throttle_scale: Mapped[float] = mapped_column(Float, default=1.0)
    thrust_sign: Mapped[int] = mapped_column(Integer, default=1, server_default="1")
    """-1 when the upload's thrust column was flipped (load cell reversed); the samples are stored corrected."""
    air_density_kg_m3: Mapped[float] = mapped_column(Float)
    filename: Mapped[str] = mapped_column(String(255), default="")
    notes: Mapped[str] = mapped_column(Text, default="")
    sample_count: Mapped[int] = mapped_column(Integer, default=0)
    flagged_count: Mapped[int] = mapped_column(Integer, default=0)
    created_by_id: Mapped[int | None] = mapped_column(
        ForeignKey("user_account.id", ondelete="SET NULL"), nullable=True
    )
    created_at: Mapped[datetime] = mapped_column(DateTime(timezone=True), default=utcnow)

    samples: Mapped[list[BenchSample]] = relationship(
        back_populates="run", cascade="all, delete-orphan", passive_deletes=True, order_by="BenchSample.position"
    )


class BenchSample(Base):
    """One measured row, in SI units; ``flag`` says why a row is not used (e.g. a collapsed supply)."""

    __tablename__ = "bench_sample"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    run_id: Mapped[int] = mapped_column(ForeignKey("bench_run.id", ondelete="CASCADE"), index=True)
    position: Mapped[int] = mapped_column(Integer)
    throttle: Mapped[float] = mapped_column(Float)
    bus_voltage_v: Mapped[float] = mapped_column(Float)
    bus_current_a: Mapped[float] = mapped_column(Float)
    rpm: Mapped[float] = mapped_column(Float)
    thrust_n: Mapped[float] = mapped_column(Float)
    torque_nm: Mapped[float | None] = mapped_column(Float, nullable=True)
    temperature_c: Mapped[float | None] = mapped_column(Float, nullable=True)
    flag: Mapped[str | None] = mapped_column(String(64), nullable=True)

    run: Mapped[BenchRun] = relationship(back_populates="samples")
