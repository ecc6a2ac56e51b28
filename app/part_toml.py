"""Write a part as TOML in the library's own schema (see :mod:`app.parts`).

``part_to_toml(part)`` is the inverse of reading a part file: saved as
``<part.id>.toml`` in a parts folder, ``Library.load`` reads back the same
part (numbers are written with ``repr``, so they survive exactly).
"""

from __future__ import annotations

import math
from typing import Any

from app.parts import Part

# TOML basic strings must escape the quote, the backslash and control characters but tab.
_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def toml_string(text: str) -> str:
    out = []
    for ch in text:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif (ord(ch) < 0x20 and ch != "\t") or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04X}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ValueError(f"a part holds finite numbers only, got {value!r}")
        return repr(value)
    if isinstance(value, str):
        return toml_string(value)
    raise TypeError(f"cannot write {type(value).__name__} into a part file")


def part_to_toml(part: Part) -> str:
    """The part file text; optional fields left out when they are unset."""
    lines = [
        f"# ohmpick part '{part.id}': save as {part.id}.toml in a parts folder.",
        f"name = {toml_string(part.name)}",
        f"notes = {toml_string(part.notes)}",
    ]
    if part.dissipation_w_per_k is not None:
        lines.append(f"dissipation_w_per_k = {toml_value(part.dissipation_w_per_k)}")
    lines += ["", "[sensor]"]
    lines += [f"{key} = {toml_value(value)}" for key, value in part.sensor.items() if value is not None]
    if part.tolerances:
        lines += ["", "[tolerances]"]
        lines += [f"{key} = {toml_value(float(value))}" for key, value in part.tolerances.items()]
    if part.fitted is not None:
        lines += ["", "[fitted]", f"min = {toml_value(float(part.fitted[0]))}", f"max = {toml_value(float(part.fitted[1]))}"]
    return "\n".join(lines) + "\n"
