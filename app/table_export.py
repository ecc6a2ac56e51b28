"""Firmware tables as JSON-ready data, CSV and a C99 header.

The fixed-point form is the one the firmware uses: each entry stores
round(value · scale) as a signed integer (int16_t when every entry fits,
else int32_t), and the lookup interpolates in integers with rounding.
:func:`lookup_fixed` does that arithmetic exactly as the emitted C does, so
the reported fixed-point error is the firmware's own. Output is free of
dates and machine details, so the same inputs give the same bytes.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from typing import Optional

import numpy as np

from app.errors import InputError
from app.tables import Design, Table, Tables
from app.units import format_resistance

# One unit of the stored integer per quantity on the axis (common firmware choices).
DEFAULT_SCALE = {"°C": 100, "decade": 1000, "travel": 10000}
SCALE_WORDS = {"°C": "°C", "decade": "decades of lux (log10 lux)", "travel": "of travel"}
STIMULUS_COLUMN = {"temperature": "temperature_c", "illuminance": "illuminance_lux", "position": "position_travel"}
DEFAULT_C_NAME = {"temperature": "temp_table", "illuminance": "light_table", "position": "pot_table"}
C_NAME = re.compile(r"^[a-z_][a-z0-9_]{0,39}$")
INT16 = (-(2**15), 2**15 - 1)
INT32 = (-(2**31) + 1, 2**31 - 1)  # -2^31 has no plain C literal
METHOD = ("greedy farthest reach: from each entry the farthest code whose chord keeps every code in "
          "between within the bound, found by doubling then bisection, each candidate checked at every "
          "code; optimal for a curve without an inflection point, near-optimal otherwise")


@dataclass(frozen=True)
class FixedPoint:
    scale: int
    ctype: str              # "int16_t" | "int32_t"
    values: np.ndarray      # (k,) int64 stored entries
    max_error: float        # largest |lookup/scale − exact| over every valid code, axis units


def literal(x: float) -> str:
    """Shortest text that reads back as the same double, in C and in Python."""
    return repr(float(x))


def round_half_away(x: np.ndarray) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    return (np.sign(x) * np.floor(np.abs(x) + 0.5)).astype(np.int64)


def lookup_fixed(entry_codes: np.ndarray, entry_values: np.ndarray, codes) -> np.ndarray:
    """The C lookup, in int64: clamp to the ends, interpolate, divide rounding half away from zero."""
    codes = np.asarray(codes, dtype=np.int64)
    c = np.asarray(entry_codes, dtype=np.int64)
    v = np.asarray(entry_values, dtype=np.int64)
    hi = np.clip(np.searchsorted(c, codes, side="right"), 1, c.size - 1)
    lo = hi - 1
    num = (v[hi] - v[lo]) * (np.clip(codes, c[0], c[-1]) - c[lo])
    den = c[hi] - c[lo]
    q = np.sign(num) * ((np.abs(num) + den // 2) // den)
    return v[lo] + q


def fixed_point(tables: Tables, table: Table, scale: Optional[int]) -> FixedPoint:
    axis_unit = tables.design.axis_unit
    if scale is None:
        scale = DEFAULT_SCALE[axis_unit]
    stored = round_half_away(table.values * scale)
    if stored.min() >= INT16[0] and stored.max() <= INT16[1]:
        ctype = "int16_t"
    elif stored.min() >= INT32[0] and stored.max() <= INT32[1]:
        ctype = "int32_t"
    else:
        raise InputError("fixed_scale", f"{scale} makes entries overflow 32-bit integers; use a smaller scale")
    got = lookup_fixed(table.codes, stored, tables.codes) / scale
    return FixedPoint(int(scale), ctype, stored, float(np.max(np.abs(got - tables.f))))


# --- JSON ---------------------------------------------------------------------

def _num(x: float) -> Optional[float]:
    return float(x) if np.isfinite(x) else None


def describe(d: Design, label: str) -> list[str]:
    """The design inputs, one line each, for comments and page summaries."""
    s, c, a = d.sensor, d.circuit, d.adc
    params = ", ".join(f"{k} {v:g}" if isinstance(v, (int, float)) else f"{k} {v}"
                       for k, v in s.to_dict().items() if k != "kind" and v is not None)
    lines = [f"sensor: {label} ({s.kind}: {params})"]
    if s.kind == "pot" and s.divider_wired:
        lines.append(f"circuit: supply {c.supply_v:g} V, pot across the supply, output at the wiper"
                     + (f", load {format_resistance(c.load_ohm)} to ground" if c.load_ohm else ""))
    else:
        extra = "".join(f", {name} {format_resistance(v)}" for name, v in
                        (("load to ground", c.load_ohm), ("resistor across the sensor", c.parallel_ohm)) if v)
        lines.append(f"circuit: supply {c.supply_v:g} V, sensor at the {c.sensor_at}, fixed resistor "
                     f"{format_resistance(c.fixed_ohm, 4)} ({c.fixed_ohm:g} ohm){extra}")
    ref = "ratiometric (reference = supply)" if a.ratiometric else f"reference {a.vref_v:g} V"
    lines.append(f"converter: {a.bits} bits, {ref}, LSB {a.lsb(c.supply_v):.6g} V; code k stands for (k + 1/2) LSB")
    lines.append(f"working range: {d.lo:g} .. {d.hi:g} {d.unit}")
    return lines


def result(tables: Tables, table: Table, fixed: FixedPoint, label: str) -> dict:
    """The response of POST /api/table (json) for the chosen ``table``."""
    d, valid = tables.design, tables.valid
    stimulus = d.sensor.from_axis(table.values)
    out = {
        "codes": [int(c) for c in table.codes],
        "stimulus": [_num(v) for v in stimulus],
        "max_interpolation_error": table.max_error,
        "valid_codes": valid.to_dict(),
        "layout": table.layout,
        "step": table.step,
        "entries": int(table.codes.size),
        "worst_code": table.worst_code,
        "quantity": d.sensor.quantity,
        "stimulus_unit": d.unit,
        "error_unit": d.axis_unit,
        "range": {"min": d.lo, "max": d.hi},
        "adc": {"bits": d.adc.bits, "ratiometric": d.adc.ratiometric, "vref_v": d.adc.vref_v,
                "lsb_v": d.adc.lsb(d.circuit.supply_v)},
        "inputs": describe(d, label),
        "uniform": {"step": tables.uniform.step, "entries": int(tables.uniform.codes.size),
                    "max_interpolation_error": tables.uniform.max_error},
        "fewest": None,
        "polynomial": None,
        "steinhart_hart": None,
        "fixed_point": {"scale": fixed.scale, "type": fixed.ctype, "unit": f"1/{fixed.scale} {SCALE_WORDS[d.axis_unit]}",
                        "values": [int(v) for v in fixed.values], "max_error": fixed.max_error},
        "warnings": list(valid.warnings),
    }
    if d.axis_unit != d.unit:
        out["axis_values"] = [_num(v) for v in table.values]
    if tables.fewest is not None:
        few = tables.fewest
        out["fewest"] = {"error_bound": few.bound, "entries": int(few.codes.size),
                         "max_interpolation_error": few.max_error, "worst_code": few.worst_code, "method": METHOD}
    if tables.poly is not None:
        p = tables.poly
        out["polynomial"] = {
            "degree": p.degree, "variable": "x = (code - mid) / half", "mid": p.mid, "half": p.half,
            "coefficients": [float(v) for v in p.coef], "order": "ascending powers of x",
            "max_error": float(np.max(np.abs(p.error))),
            "worst_code": int(tables.valid.min + np.argmax(np.abs(p.error))),
            "fit": "least squares over every valid code",
        }
    if tables.sh is not None:
        out["steinhart_hart"] = steinhart_section(tables)
    return out


def ohm_of_code_steps(d: Design) -> list[tuple[str, str]]:
    """(variable, expression) steps from the code to the sensor resistance in Ω (sensor with a fixed resistor)."""
    c, a = d.circuit, d.adc
    per_code = 1.0 / a.codes if a.ratiometric else a.vref_v / (a.codes * c.supply_v)
    steps = [("u", f"(code + 0.5) * {literal(per_code)}")]  # Vout / supply at the code's centre
    if c.sensor_at == "bottom":
        steps.append(("e", f"{literal(c.fixed_ohm)} * u / (1.0 - u)"))
        if c.load_ohm:
            steps.append(("e", f"e * {literal(c.load_ohm)} / ({literal(c.load_ohm)} - e)"))
    else:
        bottom = c.fixed_ohm if not c.load_ohm else c.fixed_ohm * c.load_ohm / (c.fixed_ohm + c.load_ohm)
        steps.append(("e", f"{literal(bottom)} * (1.0 - u) / u"))
    if c.parallel_ohm:
        steps.append(("e", f"e * {literal(c.parallel_ohm)} / ({literal(c.parallel_ohm)} - e)"))
    return steps


def steinhart_section(tables: Tables) -> dict:
    from app.tables import sensor_ohm_at, steinhart_hart_c

    d = tables.design
    a, b, c = tables.sh
    ohm = sensor_ohm_at(d.sensor, d.circuit, d.adc.centre_v(tables.codes, d.circuit.supply_v))
    check = float(np.max(np.abs(steinhart_hart_c(tables.sh, ohm) - tables.f)))
    steps = ohm_of_code_steps(d)
    return {
        "a": float(a), "b": float(b), "c": float(c),
        "formula": "1/T = a + b*ln(R) + c*ln(R)^3, T in K, R in ohm; t_c = T - 273.15",
        "ohm_of_code": "; ".join(f"{name} = {expr}" for name, expr in steps) + "; R = e",
        "exact": d.sensor.kind == "ntc_sh" or c == 0.0,
        "max_error": check,
        "note": ("The sensor's own coefficients" if d.sensor.kind == "ntc_sh"
                 else "The beta model written as Steinhart-Hart: b = 1/beta, c = 0, a = 1/Tn - ln(Rn)/beta"),
    }


# --- CSV ------------------------------------------------------------------------

def to_csv(tables: Tables, table: Table, fixed: FixedPoint) -> str:
    """code, stimulus, (axis), centre voltage, note: the notes carry the fault meanings and the error."""
    d, valid = tables.design, tables.valid
    stimulus = d.sensor.from_axis(table.values)
    centre = d.adc.centre_v(table.codes, d.circuit.supply_v)
    notes: dict[int, list[str]] = {}
    last = table.codes.size - 1
    notes.setdefault(0, []).append(f"first valid code; codes below {valid.min}: {valid.below}")
    notes.setdefault(min(1, last), []).append(
        f"linear interpolation between rows: largest error {table.max_error:.4g} {d.axis_unit} over every valid code"
        + (f" (bound {table.bound:g})" if table.bound else ""))
    notes.setdefault(last, []).append(f"last valid code; codes above {valid.max}: {valid.above}")
    head = ["code", STIMULUS_COLUMN[d.sensor.quantity]]
    with_axis = d.axis_unit != d.unit
    if with_axis:
        head.append("log10_lux")
    head += ["centre_v", "note"]
    buf = io.StringIO()
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(head)
    for i, code in enumerate(table.codes):
        row = [int(code), repr(float(stimulus[i]))]
        if with_axis:
            row.append(repr(float(table.values[i])))
        row += [repr(float(centre[i])), "; ".join(notes.get(i, []))]
        writer.writerow(row)
    return buf.getvalue()


# --- C99 header ---------------------------------------------------------------------

def c_name_of(tables: Tables, name: Optional[str]) -> str:
    name = name or DEFAULT_C_NAME[tables.design.sensor.quantity]
    if not C_NAME.fullmatch(name):
        raise InputError("c_name", "must be a lower-case C identifier (a-z, 0-9, _; at most 40 characters)")
    return name


def _array(ctype: str, name: str, length: str, values) -> list[str]:
    items = [str(int(v)) for v in values]
    rows = [", ".join(items[i:i + 10]) for i in range(0, len(items), 10)]
    return [f"static const {ctype} {name}[{length}] = {{"] + [f"    {r}," for r in rows[:-1]] + [f"    {rows[-1]}", "};"]


def _comment(text: str) -> str:
    return text.replace("*/", "* /")


# Headers stay plain ASCII: some embedded toolchains still read sources as Latin-1.
_ASCII = {"°C": "degC", "°": " deg", "Ω": "ohm", "µ": "u", "μ": "u", "–": "-", "—": "-", "−": "-",
          "·": "*", "²": "^2", "³": "^3", "γ": "gamma", "β": "beta", "…": "..."}


def _ascii(text: str) -> str:
    for old, new in _ASCII.items():
        text = text.replace(old, new)
    return text.encode("ascii", "replace").decode("ascii")


def to_c(tables: Tables, table: Table, fixed: FixedPoint, label: str, name: Optional[str] = None) -> str:
    """A self-contained C99 header: the table, its scale, fault codes and a lookup function."""
    d, valid = tables.design, tables.valid
    n = c_name_of(tables, name)
    up = n.upper()
    code_type = "uint16_t" if valid.max <= 0xFFFF else "uint32_t"
    words = SCALE_WORDS[d.axis_unit]
    quantity = "log10 of illuminance" if d.axis_unit == "decade" else d.sensor.quantity
    if table.layout == "fewest":
        layout = f"fewest entries for a bound of {table.bound:g} {d.axis_unit}"
    elif table.step == 1:
        layout = "every valid code"
    else:
        layout = f"every {table.step} codes from the first valid code, and the last valid code"
    lines = [
        "/*",
        f" * {n}.h: ADC code -> {quantity}, generated by ohmpick.",
        " *",
    ]
    lines += [f" * {_comment(t)}" for t in describe(d, label)]
    lines += [
        " *",
        f" * Valid codes {valid.min} .. {valid.max} ({up}_CODE_MIN .. {up}_CODE_MAX):",
        f" *   code < {valid.min}: {_comment(valid.below)}",
        f" *   code > {valid.max}: {_comment(valid.above)}",
    ]
    lines += [f" *   note: {_comment(w)}" for w in valid.warnings]
    lines += [
        " *",
        f" * Table: {table.codes.size} entries, {layout}.",
        f" * Scale: value = round({fixed.scale} * {quantity} in {words}), so one unit is 1/{fixed.scale} {words}.",
        f" * Linear interpolation between entries: largest error {table.max_error:.4g} {d.axis_unit}",
        " *   over every valid code" + (f" (bound {table.bound:g} {d.axis_unit})." if table.bound else "."),
        f" * With the integer rounding of {n}_lookup(): largest error {fixed.max_error:.4g} {d.axis_unit}.",
        " */",
        f"#ifndef {up}_H",
        f"#define {up}_H",
        "",
        "#include <stdint.h>",
        "",
        f"#define {up}_SCALE {fixed.scale}",
        f"#define {up}_LEN {table.codes.size}u",
        f"#define {up}_CODE_MIN {valid.min}u",
        f"#define {up}_CODE_MAX {valid.max}u",
        f"#define {up}_BITS {d.adc.bits}",
        "",
    ]
    lines += _array(code_type, f"{n}_code", f"{up}_LEN", table.codes) + [""]
    lines += _array(fixed.ctype, f"{n}_value", f"{up}_LEN", fixed.values) + [""]
    lines += [
        f"/* Value (units of 1/{up}_SCALE) for a code, by linear interpolation; codes outside",
        f"   {up}_CODE_MIN .. {up}_CODE_MAX return the end value: check them for faults first. */",
        f"static inline int32_t {n}_lookup(uint32_t code)",
        "{",
        "    uint32_t lo = 0u;",
        f"    uint32_t hi = {up}_LEN - 1u;",
        "    int64_t num, den, q;",
        f"    if (code <= (uint32_t){n}_code[0]) return (int32_t){n}_value[0];",
        f"    if (code >= (uint32_t){n}_code[hi]) return (int32_t){n}_value[hi];",
        "    while (hi - lo > 1u) {",
        "        uint32_t mid = lo + (hi - lo) / 2u;",
        f"        if ((uint32_t){n}_code[mid] <= code) lo = mid; else hi = mid;",
        "    }",
        f"    num = ((int64_t){n}_value[hi] - (int64_t){n}_value[lo]) * ((int64_t)code - (int64_t){n}_code[lo]);",
        f"    den = (int64_t){n}_code[hi] - (int64_t){n}_code[lo];",
        "    q = (num >= 0 ? num + den / 2 : num - den / 2) / den;",
        f"    return (int32_t)((int64_t){n}_value[lo] + q);",
        "}",
    ]
    if tables.poly is not None:
        lines += ["", *_c_polynomial(tables, n, up)]
    if tables.sh is not None:
        lines += ["", *_c_steinhart(tables, n, up)]
    lines += ["", f"#endif /* {up}_H */", ""]
    return _ascii("\n".join(lines))


def _c_polynomial(tables: Tables, n: str, up: str) -> list[str]:
    p = tables.poly
    unit = tables.design.axis_unit
    coef = ", ".join(literal(v) for v in p.coef)
    return [
        f"/* Least-squares polynomial of degree {p.degree} over every valid code, in x = (code - MID) / HALF",
        f"   (x runs -1 .. 1): largest error {float(np.max(np.abs(p.error))):.4g} {unit}. Coefficients ascending. */",
        f"#define {up}_POLY_MID {literal(p.mid)}",
        f"#define {up}_POLY_HALF {literal(p.half)}",
        f"static const double {n}_poly[{p.degree + 1}] = {{{coef}}};",
        f"static inline double {n}_poly_eval(uint32_t code)",
        "{",
        f"    double x = ((double)code - {up}_POLY_MID) / {up}_POLY_HALF;",
        "    double y = 0.0;",
        f"    int i = {p.degree};",
        f"    for (; i >= 0; --i) y = y * x + {n}_poly[i];",
        "    return y;",
        "}",
    ]


def _c_steinhart(tables: Tables, n: str, up: str) -> list[str]:
    a, b, c = tables.sh
    body = []
    for i, (var, expr) in enumerate(ohm_of_code_steps(tables.design)):
        expr = expr.replace("code", "(double)code", 1) if var == "u" else expr
        body.append(f"    {'double ' if i < 2 else ''}{var} = {expr};")
    return [
        "/* Steinhart-Hart for firmware with floating point: 1/T = A + B ln R + C (ln R)^3, T in K, R in ohm,",
        "   and R from the code (the divider solved at the code's centre voltage). */",
        f"#define {up}_SH_A {literal(a)}",
        f"#define {up}_SH_B {literal(b)}",
        f"#define {up}_SH_C {literal(c)}",
        f"static inline double {n}_ohm_of_code(uint32_t code)",
        "{",
        *body,
        "    return e;",
        "}",
        f"#ifdef {up}_WITH_MATH /* define it (and link the maths library) for the temperature in degrees C */",
        "#include <math.h>",
        f"static inline double {n}_sh_celsius(uint32_t code)",
        "{",
        f"    double l = log({n}_ohm_of_code(code));",
        f"    return 1.0 / ({up}_SH_A + {up}_SH_B * l + {up}_SH_C * l * l * l) - 273.15;",
        "}",
        "#endif",
    ]
