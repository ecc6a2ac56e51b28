"""The C99 header against a real compiler (Debian's gcc, run as a subprocess).

* The header compiles on its own with ``gcc -std=c99 -Wall -Wextra -Werror``
  (and ``-pedantic``), alone and twice in one translation unit beside another
  table; the Steinhart–Hart block compiles with the maths library too.
* A small C program built against the header prints the lookup at 50 codes;
  it must return the stimulus Python computes, to the fixed-point resolution:
  for a table at every code within half a unit of the exact value, for a
  sparser or fewest-entry table exactly the integers of the Python emulation
  of the same arithmetic and within one unit of Python's float interpolation.
"""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import numpy as np
import pytest

from app.table_export import lookup_fixed
from app.table_request import TableIn, compute
from app.parts import Library
from tests.tools import require_binary

FLAGS = ["-std=c99", "-Wall", "-Wextra", "-Werror", "-pedantic"]
LIBRARY = Library.load()


def request(**extra) -> dict:
    body = {"sensor": {"kind": "ntc_beta", "r_nominal_ohm": "10k", "beta_k": 3950},
            "circuit": {"supply_v": 3.3, "sensor_at": "bottom", "fixed_ohm": "10k", "load_ohm": "1M"},
            "adc": {"bits": 12}, "step": 1}
    body.update(extra)
    return body


def computed(**extra):
    return compute(TableIn.model_validate(request(**extra)), LIBRARY)


def gcc(tmp: Path, source: str, *extra: str) -> str:
    """Compile and link ``source`` against the headers in ``tmp``, run it, return what it printed."""
    compiler = require_binary("gcc")
    src = tmp / "main.c"
    src.write_text(source, encoding="ascii")
    exe = tmp / "main"
    done = subprocess.run([compiler, *FLAGS, "-I", str(tmp), str(src), "-o", str(exe), *extra],
                          capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, f"gcc failed:\n{done.stderr}\n--- source ---\n{source}"
    out = subprocess.run([str(exe)], capture_output=True, text=True, timeout=30)
    assert out.returncode == 0, out.stderr
    return out.stdout


def write_header(tmp: Path, c, name: str) -> str:
    text = c.text("c")
    (tmp / f"{name}.h").write_text(text, encoding="ascii")
    return text


def program(header: str, calls: list[str], codes: list[int], fmt: str, defines: str = "") -> str:
    body = "\n".join(f'        printf("{fmt}\\n", {call});' for call in calls)
    return (f"{defines}#include <stdio.h>\n#include \"{header}\"\n"
            f"static const uint32_t probe[{len(codes)}] = {{{', '.join(map(str, codes))}}};\n"
            "int main(void)\n{\n    unsigned i;\n"
            f"    for (i = 0; i < {len(codes)}u; ++i) {{\n        uint32_t code = probe[i];\n{body}\n    }}\n"
            "    return 0;\n}\n")


def probe_codes(c, n: int = 50) -> list[int]:
    v = c.tables.valid
    return [int(x) for x in np.linspace(v.min, v.max, n).round()]


def test_header_compiles_on_its_own(tmp_path):
    c = computed(step=16, error_bound=0.1, poly_degree=4)
    text = write_header(tmp_path, c, "temp_table")
    assert "#include <stdint.h>" in text and "#ifndef TEMP_TABLE_H" in text
    assert re.search(r"static const int16_t temp_table_value\[TEMP_TABLE_LEN\]", text)
    assert "#define TEMP_TABLE_SCALE 100" in text and "1/100 degC" in text
    assert text.isascii()
    # Nothing but the header (twice, the guard must hold) in a translation unit.
    gcc(tmp_path, '#include "temp_table.h"\n#include "temp_table.h"\nint main(void) { return 0; }\n')


def test_two_tables_live_in_one_program(tmp_path):
    write_header(tmp_path, computed(step=64), "temp_table")
    light = compute(TableIn.model_validate({
        "sensor": {"kind": "ldr", "r_ref_ohm": "20k", "gamma": 0.7}, "circuit": {"supply_v": 5, "fixed_ohm": "10k"},
        "adc": {"bits": 10}, "step": 8, "range": {"min": 0.1, "max": 10000}}), LIBRARY)
    write_header(tmp_path, light, "light_table")
    out = gcc(tmp_path, '#include <stdio.h>\n#include "temp_table.h"\n#include "light_table.h"\n'
              'int main(void) { printf("%ld %ld\\n", (long)temp_table_lookup(2000u), (long)light_table_lookup(500u)); return 0; }\n')
    t, lux = (int(v) for v in out.split())
    assert t == int(lookup_fixed(computed(step=64).table.codes, computed(step=64).fixed.values, [2000])[0])
    assert lux == int(lookup_fixed(light.table.codes, light.fixed.values, [500])[0])


def test_every_code_table_returns_pythons_stimulus_at_50_codes(tmp_path):
    c = computed(step=1)
    write_header(tmp_path, c, "temp_table")
    codes = probe_codes(c)
    out = gcc(tmp_path, program("temp_table.h", ["(long)temp_table_lookup(code)"], codes, "%ld"))
    got = np.array([int(v) for v in out.split()]) / c.fixed.scale
    exact = c.tables.f[np.array(codes) - c.tables.valid.min]
    assert np.max(np.abs(got - exact)) <= 0.5 / c.fixed.scale + 1e-12


@pytest.mark.parametrize("extra", [dict(step=16), dict(step=97), dict(step=1, error_bound=0.05, table="fewest"),
                                   dict(step=8, fixed_scale=1000)], ids=["step16", "step97", "fewest", "milli"])
def test_interpolating_lookup_matches_python(tmp_path, extra):
    c = computed(**extra)
    write_header(tmp_path, c, "temp_table")
    codes = probe_codes(c)
    # Codes between entries on purpose: shift every probe off the grid where it can be.
    codes = sorted({min(c.tables.valid.max, x + 3) for x in codes})
    out = gcc(tmp_path, program("temp_table.h", ["(long)temp_table_lookup(code)"], codes, "%ld"))
    got = np.array([int(v) for v in out.split()])
    assert np.array_equal(got, lookup_fixed(c.table.codes, c.fixed.values, codes))
    python = np.interp(codes, c.table.codes, c.table.values)
    assert np.max(np.abs(got / c.fixed.scale - python)) <= 1.0 / c.fixed.scale
    exact = c.tables.f[np.array(codes) - c.tables.valid.min]
    assert np.max(np.abs(got / c.fixed.scale - exact)) <= c.fixed.max_error + 1e-12


def test_formulas_in_the_header_match_python(tmp_path):
    c = compute(TableIn.model_validate({
        "sensor": {"kind": "ntc_sh", "a": 1.19855538756e-3, "b": 2.21544576321e-4, "c": 1.47136378086e-7},
        "circuit": {"supply_v": 3.3, "sensor_at": "top", "fixed_ohm": "10k", "load_ohm": "470k", "parallel_ohm": "100k"},
        "adc": {"bits": 14}, "step": 32, "poly_degree": 6, "range": {"min": -20, "max": 120}}), LIBRARY)
    write_header(tmp_path, c, "temp_table")
    codes = probe_codes(c)
    calls = ["temp_table_sh_celsius(code)", "temp_table_poly_eval(code)"]
    out = gcc(tmp_path, program("temp_table.h", calls, codes, "%.12e", defines="#define TEMP_TABLE_WITH_MATH\n"),
              "-lm")
    values = np.array([float(v) for v in out.split()]).reshape(-1, 2)
    exact = c.tables.f[np.array(codes) - c.tables.valid.min]
    assert np.max(np.abs(values[:, 0] - exact)) < 1e-9
    assert np.max(np.abs(values[:, 1] - c.tables.poly(np.array(codes)))) < 1e-9


def test_csv_and_header_carry_the_same_table():
    c = computed(step=32)
    header = c.text("c")
    rows = [line.split(",") for line in c.text("csv").strip().splitlines()[1:]]
    csv_codes = [int(r[0]) for r in rows]
    match = re.search(r"temp_table_code\[TEMP_TABLE_LEN\] = \{([^}]*)\}", header)
    assert [int(v) for v in match.group(1).replace("\n", " ").split(",")] == csv_codes
    assert "sensor shorted" in header and "sensor open" in header
