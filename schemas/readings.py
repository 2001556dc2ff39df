"""Schema of the pump-fleet demo readings (invented scenario), for pandera's polars backend.

A pipeline file points at it as ``schemas/readings.py:Readings``. The ranges are
physical limits of the sensors, not the usual operating band: a value outside
them is a broken reading, not a sick pump.
"""

from __future__ import annotations

import pandera.polars as pa

__all__ = ["CONDITIONS", "MODELS", "Readings", "SHIFTS", "SITES"]

SITES = ("north-yard", "river-intake", "tank-farm-b", "quarry-east")
MODELS = ("QZ-11", "QZ-14", "VR-7", "MT-30")
SHIFTS = ("early", "late", "night")
CONDITIONS = ("healthy", "cavitation", "bearing-wear", "seal-leak", "impeller-damage")


class Readings(pa.DataFrameModel):
    """One sensor snapshot of one pump, labelled by a field technician."""

    reading_id: int = pa.Field(unique=True, ge=0)
    site: str = pa.Field(isin=SITES)
    pump_model: str = pa.Field(isin=MODELS)
    shift: str = pa.Field(isin=SHIFTS)
    vibration_mm_s: float = pa.Field(ge=0.0, le=80.0)
    bearing_temp_c: float = pa.Field(ge=-20.0, le=150.0)
    # Gauge pressure: suction may pull a vacuum, but never below about -100 kPa.
    suction_kpa: float = pa.Field(ge=-100.0, le=600.0)
    discharge_kpa: float = pa.Field(ge=0.0, le=2500.0)
    flow_m3_h: float = pa.Field(ge=0.0, le=400.0)
    motor_current_a: float = pa.Field(ge=0.0, le=200.0)
    note: str = pa.Field(nullable=True)
    condition: str = pa.Field(isin=CONDITIONS)

    class Config:
        """Every sensor column is required and typed exactly; extra columns are allowed."""

        coerce = False
        strict = False
