"""Readings: one value per tag and UTC millisecond, in SI units."""

from __future__ import annotations

from sqlalchemy import BigInteger, Float, Integer
from sqlalchemy.orm import Mapped, mapped_column

from api.core.db import Base


class Reading(Base):
    """A stored reading. Written by the bulk upsert in ``api.readings.store`` only.

    No foreign key to ``tags``: see the table notes in ``api.core.db``.
    """

    __tablename__ = "readings"

    tag_id: Mapped[int] = mapped_column(Integer, primary_key=True)
    t_ms: Mapped[int] = mapped_column(BigInteger, primary_key=True)
    """UTC epoch milliseconds."""
    value: Mapped[float] = mapped_column(Float)
    """In the SI unit of the tag."""
