"""The table request (API body and ``ohmpick table`` file) and the one computation behind it.

No HTTP here: the route (``app/api/table.py``), the Firmware page and the CLI
all call :func:`compute` and render its result in the format asked for.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal, Optional

from pydantic import Field

from app import schemas, service, tables
from app.adc import Adc
from app.errors import InputError
from app.parts import Library
from app.table_export import FixedPoint, c_name_of, fixed_point, result, to_c, to_csv

MEDIA = {"csv": "text/csv", "c": "text/x-c", "json": "application/json"}
SUFFIX = {"csv": ".csv", "c": ".h", "json": ".json"}


class TableAdcIn(schemas.Strict):
    """The converter (ideal, IEEE Std 1241 code convention)."""

    bits: int = Field(json_schema_extra={"minimum": tables.MIN_TABLE_BITS, "maximum": tables.MAX_TABLE_BITS},
                      description=f"Resolution, {tables.MIN_TABLE_BITS} to {tables.MAX_TABLE_BITS} bits (tables cover every code)")
    ratiometric: bool = Field(True, description="Reference = the divider's supply")
    vref_v: Optional[float] = Field(None, gt=0, le=1000, description="Reference voltage when not ratiometric, V")


class TableIn(schemas.Strict):
    sensor: schemas.SensorIn
    circuit: schemas.CircuitIn
    adc: TableAdcIn
    step: int = Field(1, ge=1, description="Table entry every `step` codes (1 = every code); the last valid code is always an entry")
    format: Literal["json", "csv", "c"] = "json"
    range: Optional[schemas.RangeIn] = Field(
        None, description="Stimulus range a working sensor covers; codes outside it mean a fault or an out-of-range "
                          "reading. Default: -55 .. 150 °C for NTCs, the model's physical limits otherwise")
    error_bound: Optional[float] = Field(
        None, gt=0, description="Largest interpolation error wanted (°C, decades of lux, travel): adds the fewest-entry table")
    table: Literal["uniform", "fewest"] = Field(
        "uniform", description="Which table the codes/stimulus and the CSV and C exports carry ('fewest' needs error_bound)")
    poly_degree: Optional[int] = Field(None, ge=1, le=tables.MAX_POLY_DEGREE,
                                       description="Adds a least-squares polynomial in the scaled code of this degree")
    fixed_scale: Optional[int] = Field(None, ge=1, le=1_000_000_000,
                                       description="Fixed-point scale of the C table (default 100 per °C, 1000 per decade of lux, 10000 per travel)")
    c_name: Optional[str] = Field(None, max_length=40, description="C identifier prefix (default temp_table, light_table or pot_table)")


@dataclass(frozen=True)
class Computed:
    tables: tables.Tables
    table: tables.Table
    fixed: FixedPoint
    label: str
    c_name: str

    def json(self) -> dict[str, Any]:
        return result(self.tables, self.table, self.fixed, self.label)

    def text(self, fmt: str) -> str:
        if fmt == "csv":
            return to_csv(self.tables, self.table, self.fixed)
        return to_c(self.tables, self.table, self.fixed, self.label, self.c_name)


def compute(req: TableIn, library: Library) -> Computed:
    sensor = service.sensor_of(req.sensor, library)
    circuit = service.circuit_of(req.circuit)
    adc = Adc(bits=tables.check_bits(req.adc.bits), ratiometric=req.adc.ratiometric, vref_v=req.adc.vref_v)
    lo, hi = (req.range.min, req.range.max) if req.range is not None else (None, None)
    design = tables.design(sensor, circuit, adc, lo, hi)
    if req.table == "fewest" and req.error_bound is None:
        raise InputError("error_bound", "is required for the fewest-entry table")
    built = tables.build(design, req.step, req.error_bound, req.poly_degree)
    chosen = built.fewest if req.table == "fewest" else built.uniform
    fixed = fixed_point(built, chosen, req.fixed_scale)
    if isinstance(req.sensor, schemas.PartRef):
        label = library.get(req.sensor.part).name
    else:
        label = f"own {sensor.kind} values"
    return Computed(built, chosen, fixed, label, c_name_of(built, req.c_name))


def file_name(computed: Computed, fmt: str) -> str:
    return computed.c_name + SUFFIX[fmt]
