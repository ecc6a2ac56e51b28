"""Request and response models of the HTTP API (and of the CLI's input files).

Sensor models are generated from the core's dataclass fields, so a kind's
parameters are declared once (in ``app/models``). Resistances accept numbers
or text such as ``4k7``; the core does the physics checks.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal, Optional, Union

from pydantic import ValidationError, BaseModel, BeforeValidator, ConfigDict, Discriminator, Field, Tag, WithJsonSchema, create_model

from app import constants as K
from app.errors import InputError
from app.models import SENSOR_CLASSES, field_spec
from app.units import parse_resistance


def problems_from(exc: ValidationError) -> list[dict[str, str]]:
    """Pydantic's errors as [{field, message}], field a dotted path of the request."""
    out = []
    for err in exc.errors():
        message = str(err.get("msg", "invalid value"))
        inner = (err.get("ctx") or {}).get("error")
        if isinstance(inner, InputError):
            message = inner.message
        elif message.startswith("Value error, "):
            message = message[len("Value error, "):]
        loc = [str(p) for p in err.get("loc", ()) if p != "body" and not str(p).startswith((UNION_TAG_PREFIX, "function-"))]
        out.append({"field": ".".join(loc), "message": message})
    return out


def _ohm(value: Any) -> float:
    return parse_resistance(value, field="value")


Ohm = Annotated[
    float,
    BeforeValidator(_ohm),
    WithJsonSchema(
        {
            "anyOf": [{"type": "number", "exclusiveMinimum": 0}, {"type": "string", "maxLength": 64}],
            "description": "Resistance in Ω: a number, SI text (4.7k, 4.7 kΩ) or an RKM code (4K7, R47)",
            "examples": [4700, "4k7", "4.7 kΩ"],
        }
    ),
]


class Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)


_CHOICES = {"taper": Literal["linear", "log"], "wiring": Literal["divider", "rheostat"]}
_DOCS = {
    "ntc_beta": "NTC thermistor, beta model: R = Rn·exp(β(1/T − 1/Tn)).",
    "ntc_sh": "NTC thermistor, Steinhart–Hart: 1/T = a + b·ln R + c·(ln R)³ (T in K).",
    "rtd": "Platinum RTD, IEC 60751 Callendar–Van Dusen (defaults: the standard's A, B, C).",
    "ldr": "Light-dependent resistor: R = Rref·(E/Eref)^−γ, optional dark resistance in parallel.",
    "pot": "Potentiometer: position from the ground end (0..1), linear or log taper.",
}


def _sensor_model(kind: str) -> type[BaseModel]:
    required, optional = field_spec(kind)
    spec: dict[str, Any] = {"kind": (Literal[kind], ...)}
    for name in (*required, *optional):
        kind_of = Ohm if name.endswith("_ohm") else _CHOICES.get(name, float)
        if name in optional:
            spec[name] = (Optional[kind_of], optional[name])
        else:
            spec[name] = (kind_of, ...)
    title = "".join(part.capitalize() for part in kind.split("_")) + "Sensor"
    return create_model(title, __base__=Strict, __doc__=_DOCS[kind], **spec)


SENSOR_MODELS = {kind: _sensor_model(kind) for kind in SENSOR_CLASSES}


class PartRef(Strict):
    """A part of the library by id (``GET /api/parts``)."""

    part: str = Field(min_length=1, max_length=100)


def _sensor_tag(value: Any) -> str | None:
    """Route a sensor object to its kind's model, or to a part reference."""
    if isinstance(value, dict):
        if "part" in value:
            return UNION_TAG_PREFIX + "part"
        kind = value.get("kind")
        return UNION_TAG_PREFIX + kind if isinstance(kind, str) and kind in SENSOR_MODELS else None
    return UNION_TAG_PREFIX + ("part" if isinstance(value, PartRef) else str(getattr(value, "kind", "")))


# Tags show in error locations; the prefix lets the error handler drop them.
UNION_TAG_PREFIX = "~"
SensorIn = Annotated[
    Union[
        tuple(Annotated[model, Tag(UNION_TAG_PREFIX + kind)] for kind, model in SENSOR_MODELS.items())
        + (Annotated[PartRef, Tag(UNION_TAG_PREFIX + "part")],)
    ],
    Discriminator(
        _sensor_tag,
        custom_error_type="sensor_kind",
        custom_error_message="needs 'kind' (one of " + ", ".join(SENSOR_MODELS) + ") or 'part'",
    ),
]


class CircuitIn(Strict):
    supply_v: float = Field(ge=0.01, le=1000, description="Divider supply, V (10 mV .. 1 kV)")
    sensor_at: K.SensorAt = "bottom"
    fixed_ohm: Optional[Ohm] = None
    load_ohm: Optional[Ohm] = Field(None, description="Resistance from the output to ground (ADC input, next stage)")
    parallel_ohm: Optional[Ohm] = Field(None, description="Resistor across the sensor")


class RangeIn(Strict):
    min: float = Field(description="Stimulus at the low end (°C, lux or travel)")
    max: float = Field(description="Stimulus at the high end")


class LimitsIn(Strict):
    min_ohm: Ohm = K.DEFAULT_MIN_OHM
    max_ohm: Ohm = K.DEFAULT_MAX_OHM
    max_sensor_power_w: Optional[float] = Field(None, gt=0)


class EvaluateIn(Strict):
    sensor: SensorIn
    circuit: CircuitIn
    stimulus: list[float] = Field(min_length=1, max_length=K.MAX_STIMULUS_POINTS)


class EvaluateOut(BaseModel):
    stimulus: list[float]
    sensor_ohm: list[float]
    vout_v: list[float]
    thevenin_ohm: list[float]
    sensor_power_w: list[float]
    sensitivity: list[float]


class WindowIn(Strict):
    """The converter's usable input range; each edge in volts or as a fraction of the reference (the tighter wins)."""

    min_v: Optional[float] = Field(None, ge=0, le=1000, description="Lowest usable input, V")
    max_v: Optional[float] = Field(None, gt=0, le=1000, description="Highest usable input, V")
    min_fraction: Optional[float] = Field(None, ge=0, le=1, description="Lowest usable input as a fraction of the reference")
    max_fraction: Optional[float] = Field(None, ge=0, le=1, description="Highest usable input as a fraction of the reference")


class SamplingIn(Strict):
    """A SAR converter's sampling input and what sits on the pin (settling check)."""

    capacitance_f: Optional[float] = Field(None, gt=0, le=1e-6, description="Sampling capacitor, F (e.g. 1e-11 for 10 pF)")
    switch_ohm: float = Field(0.0, ge=0, le=1e7, description="Sampling switch resistance, Ω")
    acquisition_s: Optional[float] = Field(None, gt=0, le=10, description="Acquisition (sampling) time, s")
    filter_f: Optional[float] = Field(None, gt=0, le=1, description="Capacitor from the pin to ground, F")
    interval_s: Optional[float] = Field(None, gt=0, le=1e5, description="Time between conversions of this input, s")


class ConverterIn(Strict):
    """The converter: ideal N-bit transfer (IEEE Std 1241), ratiometric or with its own reference."""

    bits: int = Field(12, ge=8, le=24, description="Resolution, 8 to 24 bits")
    ratiometric: bool = Field(True, description="The reference is the divider's own supply (supply error cancels)")
    vref_v: Optional[float] = Field(None, gt=0, le=1000, description="Reference voltage when not ratiometric, V")
    input_ohm: Optional[Ohm] = Field(None, description="The converter input as a resistance to ground (a load on the divider)")
    window: Optional[WindowIn] = Field(None, description="Usable input window: the output must stay inside it")
    sampling: Optional[SamplingIn] = Field(None, description="SAR sampling input: settling and power-up checks")


_PCT = {"ge": 0, "lt": 100}


class PartTolerancesIn(Strict):
    """± limits in percent of nominal (the converter offset in LSB); absent ones are zero."""

    fixed_pct: float = Field(0.0, **_PCT, description="Fixed resistor")
    sensor_pct: float = Field(0.0, **_PCT, description="Sensor resistance at its nominal point (R0 for an RTD)")
    beta_pct: float = Field(0.0, **_PCT, description="B value (ntc_beta only)")
    gamma_pct: float = Field(0.0, **_PCT, description="Slope γ (ldr only)")
    supply_pct: float = Field(0.0, **_PCT, description="Divider supply")
    vref_pct: float = Field(0.0, **_PCT, description="Converter reference (absolute reference only)")
    adc_gain_pct: float = Field(0.0, ge=0, le=50, description="Converter gain error")
    adc_offset_lsb: float = Field(0.0, ge=0, le=1e6, description="Converter offset error, LSB")


class SolveIn(Strict):
    sensor: SensorIn
    circuit: CircuitIn
    range: RangeIn
    objective: K.Objective = "swing"
    series: K.SeriesName = "E24"
    limits: LimitsIn = Field(default_factory=LimitsIn)
    adc: Optional[ConverterIn] = Field(None, description="accuracy objective only: the converter (default 12-bit ratiometric); "
                                 "its window, if any, is a constraint")
    tolerances: Optional[PartTolerancesIn] = Field(None, description="accuracy objective only: part tolerances (absent: zero)")
    dissipation_w_per_k: Optional[float] = Field(None, gt=0, le=10, description="accuracy objective only: the sensor's "
                                                 "dissipation constant δ, W/K, for self-heating")


class Metrics(BaseModel):
    swing_v: float
    nonlinearity_pct: float
    min_sensitivity: float
    max_sensor_power_w: float


class Candidate(BaseModel):
    fixed_ohm: float
    score: float


class SolveOut(BaseModel):
    fixed_ohm: float
    exact_ohm: float
    score: float
    objective: str
    series: str
    metrics: Metrics
    candidates: list[Candidate]
    warnings: list[str] = Field(default_factory=list, description="e.g. a fitted part used outside its fitted range")


class SeriesOut(BaseModel):
    name: str
    tolerance_pct: float
    values: list[float]


class FitPoint(Strict):
    stimulus: float
    ohm: Ohm


class FitIn(Strict):
    kind: Literal["ntc_beta", "ntc_sh", "ldr", "rtd"]
    points: list[FitPoint] = Field(min_length=1, max_length=10_000)


class FitOut(BaseModel):
    sensor: dict[str, Any]
    residuals: list[float]
    max_abs_error: float


class PartOut(BaseModel):
    id: str
    name: str
    kind: str
    sensor: dict[str, Any]
    notes: str
    tolerances: dict[str, float] = Field(default_factory=dict)
    dissipation_w_per_k: Optional[float] = None
    fitted: Optional[RangeIn] = Field(None, description="Stimulus range a fitted curve is valid over")
    origin: str = Field("library", description="Where the part comes from (the demo library, a user import, ...)")


class HealthOut(BaseModel):
    status: Literal["ok"]
    version: str


class EchoOut(BaseModel):
    status: Literal["ok"]
    keys: list[str] = Field(description="The body's top-level keys, sorted (at most 100)")


class Problem(BaseModel):
    field: str = Field(description="Dotted path of the offending field in the request ('' for the whole request)")
    message: str


class ErrorDetail(BaseModel):
    status: int
    message: str = Field(description="Starts with the offending field's dotted path")
    field: str
    problems: list[Problem]


class ErrorOut(BaseModel):
    """The one error shape of every endpoint (app/api/errors.py)."""

    error: ErrorDetail
