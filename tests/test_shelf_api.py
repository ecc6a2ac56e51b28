"""The parts shelf API: user parts, table import and fit, delete, TOML export.

Outside checks:
* Steinhart–Hart recovery: a table generated from known coefficients
  (Steinhart and Hart, Deep-Sea Research 15, 1968: 1/T = A + B ln R + C ln³R)
  with seeded temperature noise; the bound is derived here from the
  least-squares covariance of the design matrix and the noise level.
* Platinum RTD: the IEC 60751 Pt100 table, values typed from the standard
  and each checked against the Callendar–Van Dusen equation written out here.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from fastapi.testclient import TestClient

from app.parts import Library

T0 = 273.15  # SI Brochure (9th ed.): T/K = t/°C + 273.15

# Invented demo coefficients (sample_parts/demo-ntc-10k-sh.toml says how they were made): not a real part's.
SH_A, SH_B, SH_C = 1.19855538756e-3, 2.21544576321e-4, 1.47136378086e-7

# IEC 60751:2008, Pt100 table (R0 = 100 Ω), values typed from the published table, °C → Ω.
IEC_PT100 = {
    -200: 18.52, -150: 39.72, -100: 60.26, -80: 68.33, -50: 80.31, -20: 92.16, 0: 100.00, 10: 103.90,
    25: 109.73, 50: 119.40, 100: 138.51, 150: 157.33, 200: 175.86, 300: 212.05, 400: 247.09,
    500: 280.98, 600: 313.71, 700: 345.28, 800: 375.70, 850: 390.48,
}
# IEC 60751 Callendar–Van Dusen coefficients, typed from the standard.
CVD_A, CVD_B, CVD_C = 3.9083e-3, -5.775e-7, -4.183e-12


def cvd_shape(t: float) -> float:
    """R(t)/R0 by Callendar–Van Dusen (IEC 60751), the C term below 0 °C only."""
    cold = CVD_C * (t - 100.0) * t**3 if t < 0 else 0.0
    return 1.0 + CVD_A * t + CVD_B * t * t + cold


def sh_resistance(t_c: float) -> float:
    """ln R from the cubic C x³ + B x + (A − 1/T) = 0 (its one real root), solved independently of app code."""
    roots = np.roots([SH_C, 0.0, SH_B, SH_A - 1.0 / (t_c + T0)])
    real = roots[np.abs(roots.imag) < 1e-9].real
    assert real.size == 1
    return math.exp(real[0])


def csv_of(header: str, rows) -> str:
    return header + "\n" + "".join(f"{s},{r}\n" for s, r in rows)


def _import(client, text, model, **extra):
    return client.post("/api/parts/import", json={"csv": text, "model": model, **extra})


# --- outside checks of the fit ---------------------------------------------

def test_steinhart_hart_coefficients_recovered_within_the_derived_bound(client):
    sigma_t = 0.01  # K, standard deviation of the added temperature noise
    t_true = np.arange(-40.0, 125.1, 5.0)
    ohm = np.array([sh_resistance(t) for t in t_true])
    t_meas = t_true + np.random.default_rng(20260101).normal(0.0, sigma_t, t_true.size)
    # Mixed unit forms, full precision (repr) so only the added noise matters.
    forms = [lambda r: repr(r), lambda r: f"{r / 1e3!r}k", lambda r: f"{r / 1e3!r} kΩ", lambda r: f"{r!r} ohm"]
    rows = [(repr(float(t)), forms[i % 4](float(r))) for i, (t, r) in enumerate(zip(t_meas, ohm))]
    text = csv_of("t (°C), R", rows)
    out = _import(client, text, "ntc_sh")
    assert out.status_code == 200, out.text
    got = np.array([out.json()["sensor"][k] for k in ("a", "b", "c")])

    # The fit is least squares of y = 1/T on X = [1, ln R, ln³R]. A temperature error δ moves y by
    # −δ/T² to first order (the second-order term is σ/T ≈ 4e-5 of it), so y's noise has standard
    # deviation σ/T². The estimate is P·y with P = pinv(X); its covariance is P·diag(σ_y²)·Pᵀ.
    x = np.log(ohm)
    design = np.column_stack([np.ones_like(x), x, x**3])
    p = np.linalg.pinv(design)
    sigma_y = sigma_t / (t_true + T0) ** 2
    cov = p @ np.diag(sigma_y**2) @ p.T
    bound = 5.0 * np.sqrt(np.diag(cov))  # five standard errors: a 6e-7 chance per coefficient
    true = np.array([SH_A, SH_B, SH_C])
    assert np.all(np.abs(got - true) <= bound), (got - true) / bound
    # The bound is tight enough to mean something: a 5 % error in C would fail it.
    assert bound[2] < 0.05 * SH_C
    # The residuals are the noise back again (in °C), not a misfit.
    assert out.json()["max_abs_error"] < 5 * sigma_t
    assert out.json()["fitted"] == {"min": float(t_meas.min()), "max": float(t_meas.max())}


def test_iec_60751_table_values_match_the_equation():
    # Guards the typing: each value is the equation rounded to the table's 0.01 Ω.
    for t, r in IEC_PT100.items():
        assert round(100.0 * cvd_shape(t), 2) == pytest.approx(r, abs=1e-9), t


def test_iec_60751_table_fitted_as_rtd_gives_r0(client):
    rkm = lambda r: f"{r:.2f}".replace(".", "R")  # noqa: E731  IEC 60062 RKM: 138.51 Ω → 138R51
    rows = [(t, rkm(r) if i % 3 == 0 else f"{r:.2f} Ω") for i, (t, r) in enumerate(sorted(IEC_PT100.items()))]
    out = _import(client, csv_of("temperature_c, resistance", rows), "rtd")
    assert out.status_code == 200, out.text
    r0 = out.json()["sensor"]["r0_ohm"]
    # Least squares R0 = Σ sᵢRᵢ / Σ sᵢ² with table rounding |εᵢ| ≤ 0.005 Ω: |error| ≤ 0.005 Σ|sᵢ| / Σ sᵢ².
    shape = np.array([cvd_shape(t) for t in IEC_PT100])
    derived = 0.005 * np.sum(np.abs(shape)) / np.sum(shape**2)
    assert abs(r0 - 100.0) <= derived
    assert abs(r0 - 100.0) <= 0.01  # the acceptance bound
    assert out.json()["max_abs_error"] < 0.02  # °C: 0.005 Ω over the Pt100's 0.39 Ω/°C slope, at worst


def test_ldr_power_law_table(client):
    # R = Rref (E/Eref)^−γ exactly (common LDR model; design notes): γ and Rref come back.
    rows = [(e, f"{20e3 * (e / 10.0) ** -0.7!r}") for e in (0.5, 1, 3, 10, 30, 100, 1000)]
    out = _import(client, csv_of("lux, resistance", rows), "ldr").json()
    assert out["sensor"]["gamma"] == pytest.approx(0.7, rel=1e-9)
    assert out["sensor"]["r_ref_ohm"] == pytest.approx(20e3, rel=1e-9)
    assert out["residual_unit"] == "decade" and out["max_abs_error"] < 1e-9
    assert out["fitted"] == {"min": 0.5, "max": 1000.0}


# --- import errors --------------------------------------------------------------

NTC_ROWS = [(0, "32.65k"), (25, "10k"), (50, "3.6k"), (85, "1.07k")]


def test_model_must_suit_the_table(client):
    res = _import(client, csv_of("temperature_c,resistance", NTC_ROWS), "ldr")
    assert res.status_code == 422
    assert res.json()["error"]["field"] == "model" and "lux column" in res.json()["error"]["message"]
    res = _import(client, csv_of("lux,resistance", [(1, "200k"), (10, "20k"), (100, "4k")]), "ntc_beta")
    assert res.status_code == 422 and "temperature" in res.json()["error"]["message"]


def test_bad_row_is_reported_by_line(client):
    res = _import(client, "temperature_c,resistance\n0,32.65k\n25,ten k\n50,3.6k\n", "ntc_beta")
    assert res.status_code == 422
    err = res.json()["error"]
    assert err["field"] == "csv" and err["message"].startswith("csv: line 3: ")


def test_rows_outside_the_models_range_are_refused_by_line(client):
    # 900 °C is beyond IEC 60751's −200 .. 850 °C range for the platinum curve.
    res = _import(client, csv_of("temperature_c,resistance", [(0, 100), (100, 138.51), (900, 404.9)]), "rtd")
    assert res.status_code == 422
    assert res.json()["error"]["message"].startswith("csv: line 4: 900 °C is outside the -200 .. 850 °C")


def test_unphysical_fit_is_refused_on_csv(client):
    # A rising table fitted as a beta NTC gives a negative B: refused, not saved.
    res = _import(client, csv_of("temperature_c,resistance", [(0, 100), (50, 119.4), (100, 138.51)]), "ntc_beta")
    assert res.status_code == 422 and res.json()["error"]["field"] == "csv"


def test_over_one_megabyte_is_refused(app_factory):
    text = "temperature_c,resistance\n" + "25.0000000000000,10000.00000000000\n" * 30_000
    assert len(text) > 1_000_000
    with TestClient(app_factory(), raise_server_exceptions=False) as c:  # the body limit answers first
        res = _import(c, text, "ntc_beta")
        assert res.status_code == 413 and "bytes" in res.json()["error"]["message"]
    with TestClient(app_factory(max_body_bytes=3_000_000), raise_server_exceptions=False) as c:
        res = _import(c, text, "ntc_beta")
        assert res.status_code == 422
        assert res.json()["error"]["message"].startswith("csv: the table is ") and "1 MB" in res.json()["error"]["message"]


def test_save_needs_a_name(client):
    res = _import(client, csv_of("temperature_c,resistance", NTC_ROWS), "ntc_beta", save=True)
    assert res.status_code == 422 and res.json()["error"]["field"] == "name"


# --- user parts -------------------------------------------------------------------

NEW_PART = {"name": "Drawer NTC", "sensor": {"kind": "ntc_beta", "r_nominal_ohm": "4k7", "beta_k": 3977},
            "tolerances": {"sensor_pct": 2, "beta_pct": 0.75}, "dissipation_w_per_k": 0.0012}


def test_create_part_and_it_survives_a_restart(app_factory, tmp_path):
    with TestClient(app_factory(), raise_server_exceptions=False) as c:
        res = c.post("/api/parts", json=NEW_PART)
        assert res.status_code == 201, res.text
        part = res.json()
        assert part["origin"] == "user" and part["sensor"]["r_nominal_ohm"] == 4700.0
        assert part["tolerances"] == {"sensor_pct": 2.0, "beta_pct": 0.75} and part["dissipation_w_per_k"] == 0.0012
        assert c.get(f"/api/parts/{part['id']}").json()["name"] == "Drawer NTC"
    with TestClient(app_factory(), raise_server_exceptions=False) as c:  # same data folder
        ids = [p["id"] for p in c.get("/api/parts").json()]
        assert part["id"] in ids
        shelf = {p["id"]: p for p in c.get("/api/view/shelf").json()["parts"]}
        assert shelf[part["id"]]["origin"] == "user" and shelf[part["id"]]["dissipation_w_per_k"] == 0.0012


@pytest.mark.parametrize("change, field", [
    ({"sensor": {"kind": "ntc_beta", "r_nominal_ohm": "4k7", "beta_k": -1}}, "sensor.beta_k"),
    ({"sensor": {"kind": "ntc_beta", "r_nominal_ohm": "0", "beta_k": 3950}}, "sensor.r_nominal_ohm"),
    ({"sensor": {"kind": "bolometer"}}, "sensor.kind"),
    ({"tolerances": {"sensor_pct": 120}}, "tolerances.sensor_pct"),
    ({"tolerances": {"zeta_pct": 1}}, "tolerances.zeta_pct"),
    ({"dissipation_w_per_k": 0}, "dissipation_w_per_k"),
    ({"fitted": {"min": 10, "max": 0}}, "fitted.max"),
    ({"name": "   "}, "name"),
])
def test_bad_part_fields_are_named(client, change, field):
    res = client.post("/api/parts", json={**NEW_PART, **change})
    assert res.status_code == 422, res.text
    assert res.json()["error"]["field"] == field


def test_imported_part_keeps_its_fitted_range_and_warns_beyond_it(client):
    res = _import(client, csv_of("temperature_c,resistance", NTC_ROWS), "ntc_beta", save=True, name="Bench NTC",
                  tolerances={"sensor_pct": 1}, dissipation_w_per_k=0.0015)
    assert res.status_code == 200, res.text
    part = res.json()["part"]
    assert part["fitted"] == {"min": 0.0, "max": 85.0} and part["tolerances"] == {"sensor_pct": 1.0}
    assert "4 rows" in part["notes"]
    solve = lambda lo, hi: client.post("/api/solve", json={  # noqa: E731
        "sensor": {"part": part["id"]}, "circuit": {"supply_v": 3.3}, "range": {"min": lo, "max": hi}}).json()
    assert solve(10, 80)["warnings"] == []
    warnings = solve(-20, 100)["warnings"]
    assert len(warnings) == 2
    assert "20 °C below" in warnings[0] and "15 °C above" in warnings[1]  # the size of the extrapolation


def test_delete_user_parts_only(app_factory):
    with TestClient(app_factory(), raise_server_exceptions=False) as c:
        pid = c.post("/api/parts", json=NEW_PART).json()["id"]
        keep = c.post("/api/parts", json={**NEW_PART, "name": "Keeper"}).json()["id"]
        assert c.delete(f"/api/parts/{pid}").json() == {"deleted": pid}
        again = c.delete(f"/api/parts/{pid}")
        assert again.status_code == 404 and again.json()["error"]["field"] == "id"
        assert c.get(f"/api/parts/{pid}").status_code == 404
        library = c.delete("/api/parts/demo-pt100")
        assert library.status_code == 409 and "library part" in library.json()["error"]["message"]
    with TestClient(app_factory(), raise_server_exceptions=False) as c:
        ids = {p["id"] for p in c.get("/api/parts").json()}
        assert pid not in ids and keep in ids and "demo-pt100" in ids


def test_toml_export_reads_back_through_the_library(client, tmp_path):
    res = _import(client, csv_of("temperature_c,resistance", NTC_ROWS), "ntc_sh", save=True, name="Exported")
    part = res.json()["part"]
    toml = client.get(f"/api/parts/{part['id']}/toml")
    assert toml.status_code == 200
    assert toml.headers["content-type"].startswith("application/toml")
    assert toml.headers["content-disposition"] == f'attachment; filename="{part["id"]}.toml"'
    (tmp_path / f"{part['id']}.toml").write_bytes(toml.content)
    back = Library.load(tmp_path)
    assert back.problems == []
    got = back.get(part["id"]).to_dict()
    assert {**got, "origin": "user"} == part
    assert client.get("/api/parts/no-such-part/toml").status_code == 404


def test_shelf_view_has_every_part_with_its_curve(client):
    client.post("/api/parts", json={**NEW_PART, "fitted": {"min": -10, "max": 60}})
    data = client.get("/api/view/shelf").json()
    assert {"parts", "kinds", "models", "problems", "max_table_bytes"} <= set(data)
    assert set(data["kinds"]) == {"ntc_beta", "ntc_sh", "rtd", "ldr", "pot"}
    for part in data["parts"]:
        fig = part["figure"]
        assert fig["layout"]["yaxis"]["title"]["text"] == "Resistance (Ω)"
        assert "(" in fig["layout"]["xaxis"]["title"]["text"]  # unit in the title
        assert fig["layout"]["yaxis"].get("type") == (None if part["kind"] == "pot" else "log")
        assert fig["layout"]["xaxis"]["type"] == ("log" if part["kind"] == "ldr" else "linear")
        ys = [y for y in fig["data"][0]["y"] if y is not None]
        assert len(ys) > 100 and all(y >= 0 for y in ys)
        if part.get("fitted"):
            assert fig["layout"]["shapes"][0]["x0"] == part["fitted"]["min"]
    assert any(p["origin"] == "user" for p in data["parts"])


def test_import_returns_residual_and_fit_figures(client):
    out = _import(client, csv_of("temperature_c,resistance", NTC_ROWS), "ntc_beta").json()
    assert len(out["residuals"]) == 4 and out["max_abs_error"] == pytest.approx(max(abs(r) for r in out["residuals"]))
    assert out["lines"] == [2, 3, 4, 5]
    res_fig, fit_fig = out["figures"]["residuals"], out["figures"]["fit"]
    assert res_fig["layout"]["yaxis"]["title"]["text"] == "Residual (°C)"
    assert res_fig["data"][0]["y"] == out["residuals"]
    assert fit_fig["layout"]["yaxis"]["type"] == "log" and len(fit_fig["data"]) == 2


@pytest.mark.parametrize("path, payload", [
    ("/api/parts", None), ("/api/parts", []), ("/api/parts", {"name": "x"}),
    ("/api/parts", {**NEW_PART, "sensor": "ntc"}), ("/api/parts", {**NEW_PART, "sensor": {"kind": ["ntc_beta"]}}),
    ("/api/parts", {**NEW_PART, "tolerances": {"sensor_pct": "lots"}}), ("/api/parts", {**NEW_PART, "fitted": {"min": 0}}),
    ("/api/parts", {**NEW_PART, "name": "n" * 500}), ("/api/parts", {**NEW_PART, "dissipation_w_per_k": 1e308}),
    ("/api/parts", {**NEW_PART, "sensor": {"kind": "ntc_beta", "r_nominal_ohm": {"a": 1}, "beta_k": 3950}}),
    ("/api/parts/import", {"csv": 5, "model": "ntc_beta"}), ("/api/parts/import", {"csv": "", "model": "ntc_beta"}),
    ("/api/parts/import", {"csv": "a,b", "model": "pot"}), ("/api/parts/import", {"csv": "\x00\x00", "model": "rtd"}),
    ("/api/parts/import", {"csv": "lux,r\n1e-300,1\n1,0.5\n1e300,0.1\n", "model": "ldr"}),
    ("/api/parts/import", {"csv": "t_c,r\n-273,1e300\n0,1e200\n999,1e-300\n", "model": "ntc_sh"}),
    ("/api/parts/import", {"csv": "t_c,r\n0,100\n50,119\n100,138\n", "model": "rtd", "save": True, "name": "r", "tolerances": {"x": 1}}),
])
def test_bad_bodies_never_crash(client, path, payload):
    res = client.post(path, json=payload)
    assert res.status_code == 422, res.text
    assert res.json()["error"]["message"]
