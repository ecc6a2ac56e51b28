"""Sensor kinds and the one place a sensor object (dict) becomes a model."""

from __future__ import annotations

from dataclasses import MISSING, fields
from functools import lru_cache
from typing import Any, Mapping

from app.errors import InputError
from app.models.base import Sensor
from app.models.ldr import PowerLawLDR
from app.models.ntc import BetaNTC, SteinhartHartNTC
from app.models.pot import Potentiometer
from app.models.rtd import PlatinumRTD

SENSOR_CLASSES: dict[str, type[Sensor]] = {
    cls.kind: cls for cls in (BetaNTC, SteinhartHartNTC, PlatinumRTD, PowerLawLDR, Potentiometer)
}


def field_spec(kind: str) -> tuple[list[str], dict[str, Any]]:
    """(required names, {optional name: default}) of a kind's parameters."""
    required, optional = _field_spec(kind)
    return list(required), dict(optional)


@lru_cache(maxsize=None)
def _field_spec(kind: str) -> tuple[tuple[str, ...], tuple[tuple[str, Any], ...]]:
    """Cached: every request builds a sensor, and the dataclass fields never change."""
    cls = SENSOR_CLASSES[kind]
    required = tuple(f.name for f in fields(cls) if f.default is MISSING)
    optional = tuple((f.name, f.default) for f in fields(cls) if f.default is not MISSING)
    return required, optional


def build_sensor(spec: Mapping[str, Any]) -> Sensor:
    """Validate a sensor object of the contract and build its model.

    Resistances (``*_ohm``) may be numbers or strings such as ``4k7``.
    Raises :class:`InputError` naming the field (relative to the object).
    """
    from app.units import parse_resistance  # units imports nothing of models

    if not isinstance(spec, Mapping):
        raise InputError("", "a sensor must be an object with a 'kind'")
    kind = spec.get("kind")
    if not isinstance(kind, str) or kind not in SENSOR_CLASSES:
        raise InputError("kind", f"must be one of {', '.join(SENSOR_CLASSES)}, got {kind!r}")
    required, optional_items = _field_spec(kind)
    optional = dict(optional_items)
    unknown = sorted(set(spec) - {"kind", *required, *optional})
    if unknown:
        raise InputError(unknown[0], f"is not a parameter of a {kind} sensor")
    missing = [name for name in required if spec.get(name) is None]
    if missing:
        raise InputError(missing[0], f"is required for a {kind} sensor")
    values: dict[str, Any] = {}
    for name in (*required, *optional):
        if name not in spec or (spec[name] is None and name in optional):
            continue
        value = spec[name]
        if name.endswith("_ohm"):
            value = parse_resistance(value, field=name)
        values[name] = value
    return SENSOR_CLASSES[kind](**values)


__all__ = ["Sensor", "SENSOR_CLASSES", "build_sensor", "field_spec"]
