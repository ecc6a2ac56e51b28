"""The parts library: named sensor parameter sets, one TOML file each.

A part file (own schema, validated on load)::

    name = "Demo bead NTC 10 kΩ"          # required
    notes = "Invented demo part ..."       # required: say where values come from
    dissipation_w_per_k = 0.0015           # optional, self-heating
    [sensor]                               # required: a sensor object of the API
    kind = "ntc_beta"
    r_nominal_ohm = "10k"
    beta_k = 3950
    [tolerances]                           # optional, percent
    sensor_pct = 1.0
    beta_pct = 1.0
    [fitted]                               # optional: range a fitted curve is valid over
    min = 0.0
    max = 100.0

The id is the file name without ``.toml``. A bad file is reported with its
name and field; the good ones still load.
"""

from __future__ import annotations

import itertools
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Optional

from app.errors import InputError
from app.models import build_sensor
from app.models.base import is_finite

PARTS_DIR = Path(__file__).resolve().parent.parent / "sample_parts"
ID_PATTERN = re.compile(r"^[a-z0-9][a-z0-9_-]{0,63}$")
TOLERANCE_KEYS = ("sensor_pct", "beta_pct", "gamma_pct", "r0_pct")
TOP_KEYS = {"name", "notes", "dissipation_w_per_k", "sensor", "tolerances", "fitted"}
MAX_FILE_BYTES = 64_000


class PartNotFound(KeyError):
    def __init__(self, part_id: str):
        super().__init__(part_id)
        self.part_id = part_id


@dataclass(frozen=True)
class Part:
    id: str
    name: str
    kind: str
    sensor: dict[str, Any]
    notes: str
    tolerances: dict[str, float] = field(default_factory=dict)
    dissipation_w_per_k: Optional[float] = None
    fitted: Optional[tuple[float, float]] = None
    origin: str = "library"

    def to_dict(self) -> dict[str, Any]:
        out = {
            "id": self.id, "name": self.name, "kind": self.kind, "sensor": self.sensor,
            "notes": self.notes, "tolerances": self.tolerances,
            "dissipation_w_per_k": self.dissipation_w_per_k, "origin": self.origin,
        }
        if self.fitted is not None:
            out["fitted"] = {"min": self.fitted[0], "max": self.fitted[1]}
        return out


def _number(where: str, value: Any, low: float, high: float) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not is_finite(value):
        raise InputError(where, f"must be a finite number, got {str(value)[:40]}")
    if not low <= value <= high:
        raise InputError(where, f"must lie within {low:g} .. {high:g}, got {value:g}")
    return float(value)


def _text(where: str, value: Any, limit: int) -> str:
    if not isinstance(value, str) or not value.strip():
        raise InputError(where, "must be non-empty text")
    if len(value) > limit:
        raise InputError(where, f"must be at most {limit} characters")
    return value.strip()


def part_from_mapping(part_id: str, data: Any, origin: str = "library") -> Part:
    """Validate one part's fields (the same rules for files, imports and the API)."""
    if not ID_PATTERN.match(part_id):
        raise InputError("id", "must be 1-64 lowercase letters, digits, '-' or '_'")
    if not isinstance(data, dict):
        raise InputError("", "a part must be a table of fields")
    unknown = sorted(set(data) - TOP_KEYS)
    if unknown:
        raise InputError(unknown[0], "is not a part field (" + ", ".join(sorted(TOP_KEYS)) + ")")
    for required in ("name", "notes", "sensor"):
        if required not in data:
            raise InputError(required, "is required")
    if isinstance(data["sensor"], dict) and not isinstance(data["sensor"].get("kind"), str):
        raise InputError("sensor.kind", "must be the name of a sensor kind (text)")
    try:
        sensor = build_sensor(data["sensor"])
    except InputError as err:
        raise err.within("sensor") from None
    tolerances = data.get("tolerances", {})
    if not isinstance(tolerances, dict):
        raise InputError("tolerances", "must be a table of percentages")
    for key in tolerances:
        if key not in TOLERANCE_KEYS:
            raise InputError(f"tolerances.{key}", "is not a tolerance (" + ", ".join(TOLERANCE_KEYS) + ")")
    tol = {k: _number(f"tolerances.{k}", v, 0.0, 99.0) for k, v in tolerances.items()}
    dissipation = data.get("dissipation_w_per_k")
    if dissipation is not None:
        dissipation = _number("dissipation_w_per_k", dissipation, 1e-6, 10.0)
    fitted = data.get("fitted")
    if fitted is not None:
        if not isinstance(fitted, dict) or set(fitted) != {"min", "max"}:
            raise InputError("fitted", "must be a table with min and max")
        lo = _number("fitted.min", fitted["min"], -1e9, 1e9)
        hi = _number("fitted.max", fitted["max"], -1e9, 1e9)
        if hi <= lo:
            raise InputError("fitted.max", "must be above fitted.min")
        fitted = (lo, hi)
    return Part(
        id=part_id, name=_text("name", data["name"], 120), kind=sensor.kind, sensor=sensor.to_dict(),
        notes=_text("notes", data["notes"], 2000), tolerances=tol,
        dissipation_w_per_k=dissipation, fitted=fitted, origin=origin,
    )


def read_part_file(path: Path) -> Part:
    if path.stat().st_size > MAX_FILE_BYTES:
        raise InputError("", f"file is larger than {MAX_FILE_BYTES} bytes")
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as err:
        raise InputError("", f"not valid TOML ({err})") from None
    return part_from_mapping(path.stem, data)


_LIBRARIES = itertools.count()


class Library:
    """Parts by id; ``problems`` lists the files that did not load and why."""

    def __init__(self, parts: dict[str, Part] | None = None, problems: list[str] | None = None):
        self.parts: dict[str, Part] = dict(parts or {})
        self.problems: list[str] = list(problems or [])
        # (this library, its revision): bumped on every change, so results computed from the
        # library can be cached by it.
        self._serial = next(_LIBRARIES)
        self.revision = 0

    @classmethod
    def load(cls, folder: Path = PARTS_DIR) -> "Library":
        parts, problems = {}, []
        for path in sorted(Path(folder).glob("*.toml")):
            try:
                part = read_part_file(path)
            except InputError as err:
                where = f"{path.name}: {err.field}" if err.field else path.name
                problems.append(f"{where}: {err.message}")
                continue
            parts[part.id] = part
        return cls(parts, problems)

    def get(self, part_id: str) -> Part:
        try:
            return self.parts[part_id]
        except KeyError:
            raise PartNotFound(part_id) from None

    @property
    def cache_key(self) -> tuple[int, int]:
        return self._serial, self.revision

    def add(self, part: Part) -> None:
        self.parts[part.id] = part
        self.revision += 1

    def remove(self, part_id: str) -> Part:
        """Take a part out (user parts on deletion); raises PartNotFound."""
        part = self.get(part_id)
        del self.parts[part_id]
        self.revision += 1
        return part

    def all(self) -> list[Part]:
        return sorted(self.parts.values(), key=lambda p: (p.kind, p.name))
