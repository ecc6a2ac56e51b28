"""Part files: the TOML writer (app/part_toml.py) reads back through the
library's own loader, and malformed part files are reported by file and
field while the good files beside them still load (app/parts.py).
"""

from __future__ import annotations

import shutil
import tomllib
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from app.part_toml import part_to_toml, toml_string
from app.parts import PARTS_DIR, Library, part_from_mapping

FIXTURES = Path(__file__).parent / "fixtures" / "toml"

# Bad fixture file: the field its problem must name.
MALFORMED = {
    "missing-name.toml": "name",
    "negative-beta.toml": "sensor.beta_k",
    "unknown-kind.toml": "sensor.kind",
    "unknown-tolerance.toml": "tolerances.alpha_pct",
    "tolerance-too-big.toml": "tolerances.sensor_pct",
    "dissipation-text.toml": "dissipation_w_per_k",
    "fitted-inverted.toml": "fitted.max",
    "ambiguous-resistance.toml": "sensor.r0_ohm",
    "stray-field.toml": "colour",
    "missing-gamma.toml": "sensor.gamma",
    "pot-bad-taper.toml": "sensor.taper",
    "kind-as-array.toml": "sensor.kind",
    # TOML integers have no size limit in tomllib; one beyond any float once stopped the load.
    "huge-resistance.toml": "sensor.r_nominal_ohm",
    "huge-dissipation.toml": "dissipation_w_per_k",
}
SYNTAX_ERROR = "not-toml.toml"  # no field to name: the problem names the file and TOML's own line


def _write(folder: Path, part) -> Path:
    path = folder / f"{part.id}.toml"
    path.write_text(part_to_toml(part), encoding="utf-8")
    return path


def test_demo_parts_round_trip(tmp_path):
    library = Library.load(PARTS_DIR)
    assert not library.problems and len(library.parts) >= 5
    for part in library.all():
        _write(tmp_path, part)
    again = Library.load(tmp_path)
    assert again.problems == []
    assert again.parts == library.parts


def test_fitted_range_tolerances_and_dissipation_survive(tmp_path):
    part = part_from_mapping("my-probe", {
        "name": "Probe \"B\" \\ drawer 3", "notes": "Line one\nline two\ttabbed; ünïcode °C Ω",
        "dissipation_w_per_k": 1.5e-3, "sensor": {"kind": "ntc_sh", "a": 1.1e-3, "b": 2.3e-4, "c": 9e-8},
        "tolerances": {"sensor_pct": 0.5}, "fitted": {"min": -20.0, "max": 85.5},
    }, origin="user")
    _write(tmp_path, part)
    back = Library.load(tmp_path).get("my-probe")
    assert back.fitted == (-20.0, 85.5)
    assert back.tolerances == {"sensor_pct": 0.5}
    assert back.dissipation_w_per_k == 1.5e-3
    assert back.name == part.name and back.notes == part.notes
    assert back.origin == "library"  # a file in a parts folder is library stock


def test_optional_fields_are_left_out():
    part = part_from_mapping("bare", {"name": "Bare", "notes": "n", "sensor": {"kind": "ldr", "r_ref_ohm": "20k", "gamma": 0.7}})
    text = part_to_toml(part)
    assert "[tolerances]" not in text and "[fitted]" not in text and "dissipation" not in text
    assert "r_dark_ohm" not in text  # None is not written (TOML has no null)
    assert tomllib.loads(text)["sensor"]["r_ref_ohm"] == 20000.0


@given(st.text(min_size=1, max_size=60))
def test_any_text_is_a_valid_toml_string(text):
    assert tomllib.loads(f"x = {toml_string(text)}")["x"] == text


@given(st.floats(min_value=1e-3, max_value=1e9, allow_nan=False), st.floats(min_value=0.3, max_value=1.5))
def test_numbers_survive_exactly(r_ref, gamma):
    part = part_from_mapping("p", {"name": "p", "notes": "n", "sensor": {"kind": "ldr", "r_ref_ohm": r_ref, "gamma": gamma}})
    data = tomllib.loads(part_to_toml(part))
    assert part_from_mapping("p", data) == part


def test_malformed_parts_are_named_by_file_and_field_and_the_rest_load(tmp_path):
    for path in FIXTURES.glob("*.toml"):
        shutil.copy(path, tmp_path / path.name)
    for path in PARTS_DIR.glob("*.toml"):
        shutil.copy(path, tmp_path / path.name)
    library = Library.load(tmp_path)

    good = {p.stem for p in PARTS_DIR.glob("*.toml")} | {"good-fitted-ntc"}
    assert set(library.parts) == good
    assert library.get("good-fitted-ntc").fitted == (-20.0, 85.0)
    assert len(library.problems) == len(MALFORMED) + 1
    for name, field in MALFORMED.items():
        hits = [p for p in library.problems if p.startswith(f"{name}: ")]
        assert len(hits) == 1, (name, library.problems)
        assert hits[0].startswith(f"{name}: {field}: "), hits[0]
    syntax = [p for p in library.problems if p.startswith(f"{SYNTAX_ERROR}: ")]
    assert len(syntax) == 1 and "not valid TOML" in syntax[0] and "line 1" in syntax[0]


def test_at_least_six_malformed_fixtures():
    assert len(MALFORMED) >= 6
    assert all((FIXTURES / name).exists() for name in MALFORMED)


@pytest.mark.parametrize("stem", ["Bad Name", "UPPER", "-leading"])
def test_file_names_that_are_not_ids_are_reported(tmp_path, stem):
    shutil.copy(PARTS_DIR / "demo-pt100.toml", tmp_path / f"{stem}.toml")
    library = Library.load(tmp_path)
    assert library.parts == {}
    assert library.problems == [f"{stem}.toml: id: must be 1-64 lowercase letters, digits, '-' or '_'"]
