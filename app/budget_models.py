"""Request and response models of the error budget and the accuracy page (OpenAPI documented)."""

from __future__ import annotations

from typing import Any, Literal, Optional

from pydantic import BaseModel, Field

from app import budget, schemas
from app import constants as K


class BudgetMonteCarloIn(schemas.Strict):
    samples: int = Field(10_000, ge=1, le=budget.MAX_SAMPLES,
                         description=f"Builds simulated, 1 to {budget.MAX_SAMPLES:,}; samples × points at most {budget.MAX_CELLS:,}")
    seed: int = Field(1, ge=0, le=2**63 - 1, description="Same seed, same builds, same bands")
    distribution: Literal["uniform", "normal"] = Field(
        "uniform", description="uniform over ±tolerance, or normal with the tolerance as 3σ (truncated there)")


class BudgetIn(schemas.Strict):
    sensor: schemas.SensorIn
    circuit: schemas.CircuitIn = Field(description="The built divider, with fixed_ohm (not needed for a divider-wired pot)")
    range: schemas.RangeIn
    adc: schemas.ConverterIn = Field(default_factory=schemas.ConverterIn)
    tolerances: schemas.PartTolerancesIn = Field(default_factory=schemas.PartTolerancesIn)
    dissipation_w_per_k: Optional[float] = Field(None, gt=0, le=10, description="Dissipation constant δ, W/K: self-heating")
    monte_carlo: BudgetMonteCarloIn = Field(default_factory=BudgetMonteCarloIn)
    points: Optional[int] = Field(None, ge=2, le=budget.MAX_POINTS,
                                  description="Grid points on the stimulus axis (default 101)")
    spec: Optional[float] = Field(None, gt=0, le=1e6, description="± error allowed everywhere in the range, in the "
                                  "error unit (°C, decades of lux, travel): gives the yield")
    lead_ohm: Optional[float] = Field(None, ge=0, le=1e5, description="Resistance of each of two sensor leads, Ω "
                                      "(a two-wire RTD's lead error); the firmware does not subtract it")
    duty_cycle: Optional[float] = Field(None, gt=0, le=1, description="Fraction of time the divider is powered: "
                                        "self-heating follows the average power (sensor slow against the switching)")
    firmware_knows_load: bool = Field(False, description="The firmware's table includes the nominal load (then the "
                                      "load is no error); by default it uses the divider equation without it")


class Peak(BaseModel):
    value: Optional[float] = Field(description="Largest value over the range (null: unbounded)")
    at: Optional[float] = Field(description="Stimulus where it occurs")


class BudgetSummary(BaseModel):
    worst_case: Peak
    rss: Peak
    mc_p997: Peak
    resolution: Peak
    self_heating: Peak
    builds: dict[str, Optional[float]] = Field(description="Percentiles (p50, p95, p997) over builds of each build's "
                                               "worst error anywhere in the range")
    yield_: Optional[float] = Field(None, alias="yield", description="Share of builds within ±spec over the whole range")
    spec: Optional[float] = None


class BudgetOut(BaseModel):
    stimulus: list[Optional[float]]
    resolution: list[Optional[float]] = Field(description="Stimulus per LSB (error unit)")
    quantization: list[Optional[float]] = Field(description="Half an LSB in stimulus units")
    worst_case: list[Optional[float]] = Field(description="Every tolerance corner plus quantisation and the systematic effects")
    rss: list[Optional[float]] = Field(description="|bias| + root-sum-square of the tolerance contributors and quantisation")
    mc_p50: list[Optional[float]] = Field(description="Half of the builds read within ± this")
    mc_p95: list[Optional[float]]
    mc_p997: list[Optional[float]]
    self_heating: list[Optional[float]]
    contributors: dict[str, list[Optional[float]]] = Field(
        description="Each alone: fixed, sensor, beta, gamma, supply, vref, adc_gain, adc_offset, quantization, load, leads, self_heating")
    bias: list[Optional[float]] = Field(description="Signed error of the nominal build (load, leads, self-heating)")
    worst_low: list[Optional[float]] = Field(description="Signed lower edge of the worst case")
    worst_high: list[Optional[float]] = Field(description="Signed upper edge of the worst case")
    vout_v: list[Optional[float]]
    vout_low_v: list[Optional[float]] = Field(description="Lowest output over the tolerance corners")
    vout_high_v: list[Optional[float]]
    thevenin_ohm: list[Optional[float]]
    units: dict[str, str]
    fixed_ohm: Optional[float]
    load_ohm: Optional[float] = Field(description="The load on the output: circuit load ∥ converter input")
    tolerances_applied: dict[str, float]
    monte_carlo: dict[str, Any]
    summary: BudgetSummary
    yield_: Optional[float] = Field(None, alias="yield")
    spec: Optional[float] = None
    window: Optional[dict[str, Any]] = None
    settling: Optional[dict[str, Any]] = None
    warnings: list[str]


class AccuracyIn(BudgetIn):
    """The accuracy page's inputs: a budget request whose fixed resistor may be left to the solver."""

    circuit: schemas.CircuitIn = Field(description="fixed_ohm optional: absent, the fixed resistor is picked (see fixed_from)")
    series: K.SeriesName = Field("E24", description="Series for the picked fixed resistor")
    fixed_from: Literal["given", "swing", "accuracy"] = Field(
        "given", description="given: circuit.fixed_ohm (the swing pick when absent); swing or accuracy: the solver's pick")


class AccuracyOut(BaseModel):
    inputs: dict[str, Any] = Field(description="The inputs as used, with the fixed resistor filled in")
    sensor: dict[str, Any]
    budget: dict[str, Any] = Field(description="The POST /api/budget response for these inputs")
    picks: dict[str, Any] = Field(description="The solver's picks for the fixed resistor (swing; accuracy when asked)")
    headline: dict[str, Any]
    summary_text: str
    yield_text: Optional[str] = None
    figures: dict[str, Any]
    notices: list[dict[str, str]] = Field(default_factory=list)
