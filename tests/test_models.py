"""One behaviour test run against every sensor kind, and parameter validation.

The kinds, their required fields and defaults are the contract's sensor
table (``../shared/contract.md``), typed here rather than read from the code,
so a renamed field or a changed default fails. Derivatives are checked
against a central difference of the model's own resistance on the stimulus
axis (°C, log10 lux, travel): a consistency check, not an outside one; the
outside checks of the curves themselves are in test_rtd_iec60751.py,
test_fitting.py and test_divider_spice.py.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from app.constants import KINDS
from app.errors import InputError
from app.models import build_sensor, field_spec

# A plausible part of every kind, and a stimulus range inside its validity.
# ntc_sh coefficients: widely quoted ones for a 10 kΩ bead (common practice, no published source).
SENSORS = {
    "ntc_beta": ({"kind": "ntc_beta", "r_nominal_ohm": 10000.0, "beta_k": 3950.0}, (-40.0, 125.0)),
    "ntc_beta_t0": (
        {"kind": "ntc_beta", "r_nominal_ohm": "4k7", "beta_k": 3435.0, "t_nominal_c": 0.0},
        (-20.0, 80.0),
    ),
    "ntc_sh": ({"kind": "ntc_sh", "a": 1.129148e-3, "b": 2.34125e-4, "c": 8.76741e-8}, (-40.0, 125.0)),
    "rtd": ({"kind": "rtd", "r0_ohm": 100.0}, (-200.0, 850.0)),
    "rtd_pt1000": ({"kind": "rtd", "r0_ohm": "1k"}, (-50.0, 300.0)),
    "ldr": ({"kind": "ldr", "r_ref_ohm": 20000.0, "gamma": 0.7}, (0.1, 1e4)),
    "ldr_dark": ({"kind": "ldr", "r_ref_ohm": "20k", "gamma": 0.8, "lux_ref": 10.0, "r_dark_ohm": "1M"}, (0.3, 3000.0)),
    "pot_linear": ({"kind": "pot", "r_total_ohm": 10000.0}, (0.0, 1.0)),
    "pot_log_rheostat": (
        {"kind": "pot", "r_total_ohm": "100k", "taper": "log", "wiring": "rheostat"},
        (0.0, 1.0),
    ),
}
IDS = list(SENSORS)

# Contract table: required fields and the optional ones with their defaults.
CONTRACT = {
    "ntc_beta": ({"r_nominal_ohm", "beta_k"}, {"t_nominal_c": 25.0}),
    "ntc_sh": ({"a", "b", "c"}, {}),
    "rtd": ({"r0_ohm"}, {"a": 3.9083e-3, "b": -5.775e-7, "c": -4.183e-12}),
    "ldr": ({"r_ref_ohm", "gamma"}, {"lux_ref": 10.0, "r_dark_ohm": None}),
    "pot": ({"r_total_ohm"}, {"taper": "linear", "wiring": "divider"}),
}

# Fields that must be > 0, fields that must be finite, text fields with their choices.
POSITIVE = {
    "ntc_beta": ["r_nominal_ohm", "beta_k"],
    "ntc_sh": ["b"],
    "rtd": ["r0_ohm"],
    "ldr": ["r_ref_ohm", "gamma", "lux_ref", "r_dark_ohm"],
    "pot": ["r_total_ohm", "mid_fraction"],
}
FINITE_ONLY = {"ntc_beta": ["t_nominal_c"], "ntc_sh": ["a", "c"], "rtd": ["a", "b", "c"], "ldr": [], "pot": []}
TEXT = {"pot": {"taper": "cubic", "wiring": "bridge"}}


def spec_of(name: str) -> dict:
    return dict(SENSORS[name][0])


def interior(name: str, points: int = 13) -> np.ndarray:
    """Stimulus values strictly inside the range, evenly spaced on the axis."""
    sensor = build_sensor(spec_of(name))
    lo, hi = SENSORS[name][1]
    return sensor.grid(lo, hi, points + 2)[1:-1]


def test_every_kind_is_covered():
    assert {spec["kind"] for spec, _ in SENSORS.values()} == set(KINDS) == set(CONTRACT)


@pytest.mark.parametrize("kind", sorted(CONTRACT))
def test_fields_and_defaults_follow_the_contract(kind):
    required, optional = field_spec(kind)
    want_required, want_optional = CONTRACT[kind]
    assert set(required) == want_required
    for name, default in want_optional.items():
        assert name in optional, name
        assert optional[name] == default, name


@pytest.mark.parametrize("name", IDS)
def test_dr_daxis_matches_a_central_difference_on_the_axis(name):
    sensor = build_sensor(spec_of(name))
    s = interior(name)
    axis = sensor.to_axis(s)
    span = sensor.to_axis(SENSORS[name][1][1]) - sensor.to_axis(SENSORS[name][1][0])
    h = 1e-5 * span
    numeric = (sensor.resistance(sensor.from_axis(axis + h)) - sensor.resistance(sensor.from_axis(axis - h))) / (2 * h)
    analytic = sensor.dr_daxis(s)
    # Truncation is O(h²) ~ 1e-10 relative here; round-off ~ eps·R/h ~ 1e-11 relative.
    np.testing.assert_allclose(analytic, numeric, rtol=1e-7, atol=1e-9 * np.max(np.abs(numeric)))


@pytest.mark.parametrize("name", IDS)
def test_grid_ends_exact_and_even_on_the_axis(name):
    sensor = build_sensor(spec_of(name))
    lo, hi = SENSORS[name][1]
    # Ends chosen so that the axis round trip (log10 then 10**) does not return them exactly.
    lo, hi = lo + (hi - lo) * 0.0123456789, hi - (hi - lo) * 0.0987654321
    g = sensor.grid(lo, hi, 401)
    assert g.shape == (401,)
    assert g[0] == lo and g[-1] == hi
    steps = np.diff(sensor.to_axis(g))
    np.testing.assert_allclose(steps, steps.mean(), rtol=1e-9)
    assert np.all(steps > 0)


@pytest.mark.parametrize("name", IDS)
def test_to_dict_and_build_sensor_round_trip(name):
    sensor = build_sensor(spec_of(name))
    again = build_sensor(json.loads(json.dumps(sensor.to_dict())))
    assert again == sensor
    assert again.to_dict() == sensor.to_dict()
    s = interior(name)
    np.testing.assert_array_equal(again.resistance(s), sensor.resistance(s))


# IEC 60062 RKM / SI-prefix strings used in SENSORS and the ohms they stand for.
TEXT_OHMS = {"4k7": 4700.0, "1k": 1000.0, "20k": 20000.0, "1M": 1e6, "100k": 1e5}


WITH_TEXT = [n for n in IDS if any(isinstance(v, str) and k.endswith("_ohm") for k, v in SENSORS[n][0].items())]


@pytest.mark.parametrize("name", WITH_TEXT)
def test_resistance_strings_read_as_ohms(name):
    spec = spec_of(name)
    numeric = {k: TEXT_OHMS[v] if k.endswith("_ohm") and isinstance(v, str) else v for k, v in spec.items()}
    assert build_sensor(spec) == build_sensor(numeric)
    for key, value in spec.items():
        if key.endswith("_ohm") and isinstance(value, str):
            assert getattr(build_sensor(spec), key) == TEXT_OHMS[value]


def _bad_cases():
    """(kind's sample name, field, bad value) for every rule of the parameter table."""
    sample = {"ntc_beta": "ntc_beta", "ntc_sh": "ntc_sh", "rtd": "rtd", "ldr": "ldr_dark", "pot": "pot_linear"}
    for kind, name in sample.items():
        for field in POSITIVE[kind]:
            for value in (0.0, -1.0, -10000.0):
                yield name, field, value
        for field in POSITIVE[kind] + FINITE_ONLY[kind]:
            for value in (math.nan, math.inf, -math.inf):
                yield name, field, value
            # Wrong type: a list or a boolean is never a number, and a non-resistance number is not text.
            yield name, field, [1.0]
            yield name, field, True
            yield name, field, ("many" if field.endswith("_ohm") else "3950")
        for field, value in TEXT.get(kind, {}).items():
            yield name, field, value
            yield name, field, 1.0


@pytest.mark.parametrize(("name", "field", "value"), list(_bad_cases()))
def test_bad_parameter_raises_input_error_naming_the_field(name, field, value):
    spec = spec_of(name) | {field: value}
    with pytest.raises(InputError) as caught:
        build_sensor(spec)
    assert caught.value.field == field
    assert field in str(caught.value)


@pytest.mark.parametrize("kind", [None, "thermocouple", 3, "NTC_BETA", ""])
def test_wrong_kind_is_named(kind):
    with pytest.raises(InputError) as caught:
        build_sensor({"kind": kind, "r_nominal_ohm": 1e4, "beta_k": 3950})
    assert caught.value.field == "kind"


def test_missing_kind_and_non_object_are_refused():
    with pytest.raises(InputError) as caught:
        build_sensor({"r_nominal_ohm": 1e4, "beta_k": 3950})
    assert caught.value.field == "kind"
    with pytest.raises(InputError):
        build_sensor(["ntc_beta", 1e4, 3950])


@pytest.mark.parametrize("name", IDS)
def test_unknown_field_is_named(name):
    with pytest.raises(InputError) as caught:
        build_sensor(spec_of(name) | {"tempco_ppm": 100})
    assert caught.value.field == "tempco_ppm"


@pytest.mark.parametrize(
    ("kind", "field"), [(kind, field) for kind, (required, _) in CONTRACT.items() for field in sorted(required)]
)
def test_missing_required_field_is_named(kind, field):
    name = {"ldr": "ldr_dark", "pot": "pot_linear"}.get(kind, kind)
    spec = spec_of(name)
    del spec[field]
    with pytest.raises(InputError) as caught:
        build_sensor(spec)
    assert caught.value.field == field
    spec[field] = None  # an explicit null is as missing as an absent key
    with pytest.raises(InputError) as caught:
        build_sensor(spec)
    assert caught.value.field == field


@pytest.mark.parametrize("name", IDS)
def test_stimulus_outside_the_validity_range_is_refused(name):
    sensor = build_sensor(spec_of(name))
    lo, hi = sensor.stimulus_min, sensor.stimulus_max
    for bad in ([lo - 1.0], [hi * 2 + 1.0], [math.nan], [math.inf]):
        with pytest.raises(InputError) as caught:
            sensor.check_stimulus(np.array(bad))
        assert caught.value.field == "stimulus"
