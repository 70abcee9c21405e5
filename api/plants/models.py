"""Plants and what they are made of: fuels, tags, units and role bindings."""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import JSON, Float, ForeignKey, Integer, String, UniqueConstraint
from sqlalchemy.orm import Mapped, mapped_column, relationship

from api.core.db import Base, UTCDateTime, utcnow


class Plant(Base):
    """A site with its own time zone, dead state and fuel price."""

    __tablename__ = "plants"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    slug: Mapped[str] = mapped_column(String(64), unique=True)
    name: Mapped[str] = mapped_column(String(200))
    time_zone: Mapped[str] = mapped_column(String(64))
    """IANA zone name, for shift logs written in local time."""
    t0_k: Mapped[float] = mapped_column(Float)
    """Dead-state temperature when no ambient tag is given. [K]"""
    p0_pa: Mapped[float] = mapped_column(Float)
    """Dead-state pressure. [Pa]"""
    ambient_tag: Mapped[str | None] = mapped_column(String(128))
    """Name of the plant tag giving T0 per interval (a name, not a key: tags belong to
    the plant, and a name keeps the plants <-> tags reference one-way)."""
    atmosphere_pa: Mapped[float] = mapped_column(Float)
    """Atmospheric pressure that gauge units (barg, psig) are read against. [Pa]"""
    interval_seconds: Mapped[int] = mapped_column(Integer)
    fuel_price_per_gj: Mapped[float | None] = mapped_column(Float)
    """Fuel price per GJ on the HHV basis, in ``currency``."""
    currency: Mapped[str | None] = mapped_column(String(3))
    created_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)

    fuels: Mapped[list[Fuel]] = relationship(
        back_populates="plant", cascade="all, delete-orphan", passive_deletes=True
    )
    tags: Mapped[list[Tag]] = relationship(
        back_populates="plant", cascade="all, delete-orphan", passive_deletes=True
    )
    units: Mapped[list[Unit]] = relationship(
        back_populates="plant", cascade="all, delete-orphan", passive_deletes=True
    )


class Fuel(Base):
    """A fuel of a plant: its specification and the properties derived from it."""

    __tablename__ = "fuels"
    __table_args__ = (UniqueConstraint("plant_id", "name"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    plant_id: Mapped[int] = mapped_column(ForeignKey("plants.id", ondelete="CASCADE"), index=True)
    name: Mapped[str] = mapped_column(String(128))
    spec: Mapped[dict[str, Any]] = mapped_column(JSON)
    """The fuel section of the plant file, as given."""
    hhv_j_per_kg: Mapped[float] = mapped_column(Float)
    lhv_j_per_kg: Mapped[float | None] = mapped_column(Float)
    exergy_to_lhv_ratio: Mapped[float] = mapped_column(Float)
    density_kg_per_m3: Mapped[float | None] = mapped_column(Float)
    co2_kg_per_j: Mapped[float | None] = mapped_column(Float)
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)

    plant: Mapped[Plant] = relationship(back_populates="fuels")


class Tag(Base):
    """A measured signal of a plant, in its configured unit of measure."""

    __tablename__ = "tags"
    __table_args__ = (UniqueConstraint("plant_id", "name"),)

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    plant_id: Mapped[int] = mapped_column(ForeignKey("plants.id", ondelete="CASCADE"), index=True)
    name: Mapped[str] = mapped_column(String(128))
    description: Mapped[str | None] = mapped_column(String(500))
    unit: Mapped[str] = mapped_column(String(64))
    """Unit of measure readings arrive in, as written in the plant file (pint syntax)."""
    si_unit: Mapped[str | None] = mapped_column(String(32))
    """SI unit of the role(s) the tag feeds; None while it feeds none."""
    low: Mapped[float | None] = mapped_column(Float)
    """Lowest plausible reading, in ``unit``."""
    high: Mapped[float | None] = mapped_column(Float)
    """Highest plausible reading, in ``unit``."""
    low_si: Mapped[float | None] = mapped_column(Float)
    high_si: Mapped[float | None] = mapped_column(Float)
    uncertainty_si: Mapped[float | None] = mapped_column(Float)
    """Instrument standard uncertainty as an absolute amount, in SI."""
    uncertainty_rel: Mapped[float | None] = mapped_column(Float)
    """Instrument standard uncertainty as a fraction of the reading. [-]"""
    uncertainty_figures: Mapped[list[dict[str, Any]] | None] = mapped_column(JSON)
    """Every stated uncertainty figure in SI (None: none stated): ``basis`` (absolute,
    reading, span), ``value`` (SI amount or fraction), ``span`` [SI], ``zero`` (the SI
    value of the instrument's zero, which '% of reading' is taken from), ``coverage``,
    ``component``. ``uncertainty_si`` and ``uncertainty_rel`` keep the simple forms."""
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)

    plant: Mapped[Plant] = relationship(back_populates="tags")


class Unit(Base):
    """A piece of plant computed by one engine model (boiler, turbine, block)."""

    __tablename__ = "units"

    id: Mapped[int] = mapped_column(Integer, primary_key=True)
    plant_id: Mapped[int] = mapped_column(ForeignKey("plants.id", ondelete="CASCADE"), index=True)
    slug: Mapped[str] = mapped_column(String(64), unique=True)
    name: Mapped[str] = mapped_column(String(200))
    kind: Mapped[str] = mapped_column(String(64))
    """Name of the engine catalogue entry (``engine.catalogue.get_kind``)."""
    parameters: Mapped[dict[str, float]] = mapped_column(JSON)
    """Parameters as given (defaults of the kind are not copied in)."""
    fuel_id: Mapped[int | None] = mapped_column(
        ForeignKey("fuels.id", ondelete="RESTRICT"), index=True
    )
    updated_at: Mapped[dt.datetime] = mapped_column(UTCDateTime(), default=utcnow)

    plant: Mapped[Plant] = relationship(back_populates="units")
    fuel: Mapped[Fuel | None] = relationship()
    bindings: Mapped[list[UnitBinding]] = relationship(
        back_populates="unit", cascade="all, delete-orphan", passive_deletes=True
    )


class UnitBinding(Base):
    """Which tag feeds which role of a unit."""

    __tablename__ = "unit_bindings"

    unit_id: Mapped[int] = mapped_column(
        ForeignKey("units.id", ondelete="CASCADE"), primary_key=True
    )
    role: Mapped[str] = mapped_column(String(64), primary_key=True)
    tag_id: Mapped[int] = mapped_column(ForeignKey("tags.id", ondelete="RESTRICT"), index=True)

    unit: Mapped[Unit] = relationship(back_populates="bindings")
    tag: Mapped[Tag] = relationship()
