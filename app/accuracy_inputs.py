"""Request models → the core's converter, tolerances and accuracy set-up.

Used by the budget endpoint, the accuracy page and the solver's accuracy
objective, so a converter or a tolerance means the same everywhere.
"""

from __future__ import annotations

from typing import Any, Optional

from app import schemas
from app.adc import Adc, Sampling, Window
from app.budget import Accuracy, Tolerances


def adc_of(spec: Optional[schemas.ConverterIn]) -> Adc:
    """The converter of a request (12-bit ratiometric when absent)."""
    if spec is None:
        return Adc()
    # Other pages' converter models may carry only bits, ratiometric and vref_v.
    window, sampling = getattr(spec, "window", None), getattr(spec, "sampling", None)
    return Adc(
        spec.bits, spec.ratiometric, spec.vref_v,
        Window(**window.model_dump()) if window is not None else None,
        getattr(spec, "input_ohm", None),
        Sampling(**sampling.model_dump()) if sampling is not None else None,
    )


def tolerances_of(spec: Optional[schemas.PartTolerancesIn]) -> Tolerances:
    return Tolerances() if spec is None else Tolerances(**spec.model_dump())


def accuracy_of(req: Any, **extra) -> Accuracy:
    """The accuracy set-up of a request with optional ``adc``, ``tolerances``, ``dissipation_w_per_k``."""
    return Accuracy(
        adc=adc_of(getattr(req, "adc", None)),
        tolerances=tolerances_of(getattr(req, "tolerances", None)),
        dissipation_w_per_k=getattr(req, "dissipation_w_per_k", None),
        **extra,
    )
