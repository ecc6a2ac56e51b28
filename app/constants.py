"""Option literals, physical constants and documented limits, in one place."""

from typing import Literal

# SI Brochure (9th ed.): T/K = t/°C + 273.15.
KELVIN_OFFSET = 273.15

# The contract's sensor kinds; app/models registers one class per kind (a test checks they match).
KINDS: tuple[str, ...] = ("ntc_beta", "ntc_sh", "rtd", "ldr", "pot")

Objective = Literal["swing", "linearity", "sensitivity", "accuracy"]
OBJECTIVES: tuple[str, ...] = ("swing", "linearity", "sensitivity", "accuracy")

SeriesName = Literal["E3", "E6", "E12", "E24", "E48", "E96", "E192", "exact"]
SensorAt = Literal["top", "bottom"]
Taper = Literal["linear", "log"]
Wiring = Literal["divider", "rheostat"]

# Points on the stimulus axis used by every objective (contract).
OBJECTIVE_POINTS = 401
# Default grid for evaluate-style plots and the budget (contract).
BUDGET_POINTS = 101

# Bounds on request sizes; the edges enforce them, the core trusts them.
MAX_STIMULUS_POINTS = 10_001
MAX_BODY_BYTES = 1_000_000

# Solver search: log-spaced grid density and zoom refinement.
SOLVER_GRID_PER_DECADE = 24
SOLVER_ZOOM_POINTS = 41
# Each round shrinks the bracket 20×: four rounds from 1/24 decade leave steps of ~6e-7 in R.
SOLVER_ZOOM_ROUNDS = 4
SOLVER_CANDIDATES = 5

DEFAULT_MIN_OHM = 1.0
DEFAULT_MAX_OHM = 1e7

# Physical sanity bounds for temperatures handed to the models.
MIN_TEMPERATURE_C = -KELVIN_OFFSET
