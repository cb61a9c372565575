"""POST /api/v1/lab-fit and /api/v1/lab-readings."""

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest

DATA = Path(__file__).resolve().parent / "data"
EXAMPLE = {
    "name": "Geankoplis Example 14.2-1", "pressure": "338 kN/m^2", "area": "0.0439 m^2",
    "viscosity": "0.8937 mPa*s", "c": "23.47 kg/m^3",
    "csv": (DATA / "geankoplis_14_2_1.csv").read_text(),
}
PROBLEM = {
    "name": "Geankoplis Problem 14.2-1", "pressure": "6.70 psi", "area": "0.0439 m^2",
    "viscosity": "0.8937 cP", "c": "23.47 g/L",
    "points": [["17.3 s", "500 mL"], ["41.3 s", "1000 mL"], ["72.0 s", "1.5 L"], [108.3, 2.0e-3],
               [152.0, 2.5e-3], [201.7, 3.0e-3]],
}


#: printed textbook evaluations are classic t/V lines on the total pressure basis; the defaults
#: (model auto, cake basis) are tested on synthetic data
TEXTBOOK = {"model": "classic", "pressure_basis": "total"}


def post(client, body):
    return client.post("/api/v1/lab-fit", json=body)


def errors_of(r):
    assert r.status_code == 422, r.text
    return {e["field"]: e["msg"] for e in r.json()["detail"]}


@pytest.mark.reference
def test_one_test_gives_the_printed_resistances_and_the_fields(client):
    # Geankoplis (3rd ed.) Example 14.2-1, printed alpha = 1.863e11 m/kg, R_m = 10.63e10 1/m (from memory).
    r = post(client, {"tests": [EXAMPLE], **TEXTBOOK})
    assert r.status_code == 200, r.text
    data = r.json()
    t = data["tests"][0]
    for key in ("slope", "intercept", "r_squared", "resistance", "resistance_stderr", "medium_resistance",
                "medium_resistance_stderr", "points_used"):
        assert key in t
    assert t["resistance"] == pytest.approx(1.863e11, rel=0.01)
    assert t["medium_resistance"] == pytest.approx(10.63e10, rel=0.01)
    assert t["points_used"] == list(range(1, 10))
    assert len(t["residuals"]) == 9 and abs(sum(t["residuals"])) < 1e-6 * t["intercept"]
    assert data["compressibility"] is None
    assert data["for_cycle"]["cake"]["reference_pressure"] == pytest.approx(338e3)
    assert any("One pressure" in w for w in data["warnings"])


@pytest.mark.reference
def test_two_pressures_give_compressibility_and_a_cycle_ready_cake(client):
    # Example and Problem 14.2-1 of Geankoplis (3rd ed.): s about 0.26 (6.70 psi = 46.2 kN/m^2).
    r = post(client, {"tests": [EXAMPLE, PROBLEM], "reference_pressure": "1 bar", **TEXTBOOK})
    data = r.json()
    assert data["compressibility"] == pytest.approx(0.262, abs=0.01)
    assert data["reference_pressure"] == 1e5
    assert data["tests"][1]["resistance"] == pytest.approx(1.106e11, rel=0.005)
    assert data["medium_resistance_spread"] > 0
    # the result drops straight into a cycle request
    cycle = {
        "slurry": {"solids_mass_fraction": "2.3 %", "solids_density": "2710 kg/m^3", "temperature": 25},
        "cake": {**data["for_cycle"]["cake"], "porosity": 0.5},
        "medium_resistance": data["for_cycle"]["medium_resistance"],
        "press": {"filter_area": "17.46 m^2", "chamber_thickness": "30 mm"},
        "feed": {"mode": "constant_pressure", "pressure": "338 kN/m^2"},
        "cycle": {"downtime": "20 min"},
    }
    res = client.post("/api/v1/cycle", json=cycle)
    assert res.status_code == 200, res.text
    assert res.json()["derived"]["resistance_at_feed"] == pytest.approx(data["tests"][0]["resistance"], rel=0.01)


def test_c_from_slurry_data_and_from_dry_cake_mass(client):
    # Holdich's sheet (tests/data/README.md): x = 0.1, wet/dry = 1280/635 gives c = 125.25 kg/m^3.
    base = {"pressure": "3 bar", "area": "2.72 m^2", "viscosity": "1 mPa*s",
            "csv": (DATA / "holdich_constant_pressure.csv").read_text()}
    a = post(client, {"tests": [{**base, "solids_mass_fraction": 0.1, "wet_to_dry_ratio": 1280 / 635,
                                 "liquid_density": 1000}]}).json()["tests"][0]
    assert a["c"] == pytest.approx(125.24655, rel=1e-6)
    assert a["resistance"] == pytest.approx(5.215e11, rel=1e-3)
    b = post(client, {"tests": [{**base, "dry_cake_mass": "13.276 kg"}]}).json()["tests"][0]
    assert b["c"] == pytest.approx(13.276 / 0.106)


def test_a_dry_cake_mass_in_the_wrong_unit_is_flagged_through_its_c(client):
    # 117.6 typed with kg chosen (meant g) gave c 1000 times the usual and no word but the
    # resistance's, which did not name the mass (a plant-engineer check); the usual mass is quiet
    base = {"pressure": "3 bar", "area": "2.72 m^2", "viscosity": "1 mPa*s",
            "csv": (DATA / "holdich_constant_pressure.csv").read_text()}
    quiet = post(client, {"tests": [{**base, "dry_cake_mass": "13.276 kg"}]}).json()
    assert not any("dry cake mass" in w for w in quiet["warnings"])
    slip = post(client, {"tests": [{**base, "dry_cake_mass": "13.276 g", "name": "leaf"}]}).json()  # meant kg
    (said,) = [w for w in slip["warnings"] if "dry cake mass" in w]
    c = slip["tests"][0]["c"]
    assert c == pytest.approx(0.013276 / 0.106) and c < 10.0
    assert said.startswith("Test 1 (leaf): the dry cake mass gives c = 0.125 kg/m³ of filtrate, 80 times below the "
                           "usual 10–1500 kg/m³;"), said
    assert "check the unit of the dry cake mass (g or kg)" in said
    heavy = post(client, {"tests": [{**base, "dry_cake_mass": "1000 kg"}]}).json()
    assert any(w.startswith("Test 1: the dry cake mass gives c = 9430 kg/m³ of filtrate, 6.3 times above")
               for w in heavy["warnings"]), heavy["warnings"]


def test_user_region_by_index(client):
    r = post(client, {"tests": [{**EXAMPLE, "use": [0, 9]}], **TEXTBOOK}).json()["tests"][0]
    assert r["points_used"] == list(range(10))
    assert r["resistance"] == pytest.approx(1.863e11 * 0.96, rel=0.01)


def test_start_offset_is_accepted(client):
    r = post(client, {"tests": [{**EXAMPLE, "start": {"time": "4.4 s", "volume": "0.498 L"}}]})
    assert r.status_code == 200
    t = r.json()["tests"][0]
    assert 0 not in t["points_used"]
    assert any("not used" in w for w in t["warnings"])


@pytest.mark.parametrize(
    "change,field,fragment",
    [
        (lambda t: t.update(c=None), "tests.0", "c in exactly one way: c itself"),
        (lambda t: t.update(dry_cake_mass="1 kg"), "tests.0", "exactly one way"),
        (lambda t: t.update(temperature=20), "tests.0", "only one of viscosity or temperature"),
        (lambda t: t.update(points=[[1, 1e-4]] * 3), "tests.0", "only one of points or csv"),
        (lambda t: t.update(pressure="5 kg"), "tests.0.pressure", "not a unit of pressure"),
        (lambda t: t.update(area=0), "tests.0.area", "at least"),
        (lambda t: t.update(csv="time [s], filtrate\n1, 2\n"), "tests.0.csv", "line 1"),
        (lambda t: t.update(csv="time [s], filtrate [L]\n1, 2\n2, x\n"), "tests.0.csv", "line 3"),
        (lambda t: t.update(csv="time [s], filtrate [L]\n1, 2\n2, 1\n3, 3\n"), "tests.0.csv", "volumes must increase"),
        (lambda t: t.update(use=[5, 20]), "tests.0.use", "first < last"),
        (lambda t: t.update(use="1-5"), "tests.0.use", "write the first and last readings to fit, e.g. 1, 5"),
        (lambda t: t.update(use=[1, 3, 5]), "tests.0.use", "e.g. 1, 5"),
    ],
)
def test_bad_lab_input_is_a_422_naming_the_field(client, change, field, fragment):
    test = dict(EXAMPLE)
    change(test)
    errs = errors_of(post(client, {"tests": [test]}))
    assert field in errs, errs
    assert fragment in errs[field], errs[field]


def test_same_pressure_twice_cannot_give_compressibility(client):
    errs = errors_of(post(client, {"tests": [EXAMPLE, EXAMPLE]}))
    assert "two or more different pressures" in errs["tests"]


def test_csv_upload_returns_si_points(client):
    r = client.post("/api/v1/lab-readings", files={"file": ("p.csv", (DATA / "geankoplis_p14_2_1.csv").read_bytes())})
    assert r.status_code == 200
    assert r.json()["points"][0] == pytest.approx([17.3, 0.5e-3])
    assert r.json()["decimal"] == "comma"


def test_csv_paste_with_a_bad_row_is_a_422_naming_the_line(client):
    r = client.post("/api/v1/lab-readings", content=b"time [min], filtrate [mL]\n1, 2\n2;3\n",
                    headers={"content-type": "text/csv"})
    assert r.status_code == 422
    assert "line 3" in r.json()["detail"][0]["msg"]


def test_oversized_upload_is_refused(client):
    big = b"time [s], filtrate [L]\n" + b"1, 2\n" * 300_000
    r = client.post("/api/v1/lab-readings", content=big, headers={"content-type": "text/csv"})
    assert r.status_code == 413
    assert "larger than" in r.json()["detail"]


from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    times=st.lists(st.floats(-10, 1e5, allow_nan=False), min_size=0, max_size=12),
    volumes=st.lists(st.floats(-1e-3, 1.0, allow_nan=False), min_size=0, max_size=12),
    pressure=st.one_of(st.floats(-1e5, 1e7, allow_nan=False), st.text(max_size=8)),
    use=st.one_of(st.none(), st.tuples(st.integers(-2, 14), st.integers(-2, 14))),
)
def test_random_lab_input_never_gives_a_500_or_nan(client, times, volumes, pressure, use):
    pts = [[t, v] for t, v in zip(sorted(times), sorted(volumes))]
    test = {"pressure": pressure, "area": "100 cm^2", "viscosity": "1 mPa*s", "c": "20 g/L", "points": pts}
    if use is not None:
        test["use"] = list(use)
    r = client.post("/api/v1/lab-fit", json={"tests": [test]})
    assert r.status_code in (200, 422), r.text
    json.loads(r.text, parse_constant=lambda name: (_ for _ in ()).throw(AssertionError(name)))


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(dt=st.lists(st.floats(1e-3, 1e4), min_size=3, max_size=30), dv=st.lists(st.floats(1e-7, 1e-2), min_size=3, max_size=30),
       p=st.floats(1e3, 5e6), ref=st.floats(1e3, 5e6))
def test_random_increasing_readings_fit_or_refuse_plainly(client, dt, dv, p, ref):
    import itertools

    n = min(len(dt), len(dv))
    pts = [[t, v] for t, v in zip(itertools.accumulate(dt[:n]), itertools.accumulate(dv[:n]))]
    body = {"reference_pressure": ref, "tests": [
        {"pressure": p, "area": "100 cm^2", "temperature": 20, "c": "20 g/L", "points": pts},
        {"pressure": p * 2, "area": "100 cm^2", "temperature": 20, "c": "20 g/L", "points": pts}]}
    r = client.post("/api/v1/lab-fit", json=body)
    assert r.status_code in (200, 422), r.text
    json.loads(r.text, parse_constant=lambda name: (_ for _ in ()).throw(AssertionError(name)))


# ---- models, pressure readings, uncertainty carried forward (synthetic, derived here) ----

def synthetic_points(P, alpha=2e11, R_m=8e10, V1=0.0, with_pressure=False):
    """Exact readings of a 0.01 m² cell (mu 1 mPa·s, c 50 kg/m³): constant rate up to V1, then P."""
    A, mu, c = 0.01, 1e-3, 50.0
    K_p, B = mu * alpha * c / (A**2 * P), mu * R_m / (A * P)
    rows = []
    for V in [k * 0.25e-3 for k in range(1, 21)]:
        if V <= V1:
            q0 = 1 / (K_p * V1 + B)
            t, p = V / q0, P * (K_p * V + B) / (K_p * V1 + B)
        else:
            t = V1 * (K_p * V1 + B) + K_p / 2 * (V**2 - V1**2) + B * (V - V1)
            p = P
        rows.append([t, V, p] if with_pressure else [t, V])
    return {"pressure": P, "area": A, "viscosity": mu, "c": c, "points": rows}


def test_pressure_readings_give_the_filling_period_and_exact_resistances(client):
    data = post(client, {"tests": [synthetic_points(3e5, V1=1.1e-3, with_pressure=True)]}).json()
    t = data["tests"][0]
    assert t["model"] == "three_parameter" and t["filling"]["readings"] == 4
    assert "pressure readings" in t["filling"]["how"]
    assert t["resistance"] == pytest.approx(2e11, rel=1e-6)
    assert t["medium_resistance"] == pytest.approx(8e10, rel=1e-6)
    assert len(t["pressures"]) == 20


def test_csv_with_a_pressure_column_marks_the_filling_period(client):
    rows = synthetic_points(3e5, V1=1.1e-3, with_pressure=True)["points"]
    csv = "time [s], filtrate [L], pressure [bar]\n" + "\n".join(f"{t!r}, {v * 1e3!r}, {p / 1e5!r}" for t, v, p in rows)
    test = {"pressure": "3 bar", "area": 0.01, "viscosity": 1e-3, "c": 50, "csv": csv}
    t = post(client, {"tests": [test]}).json()["tests"][0]
    assert t["filling"]["readings"] == 4 and t["resistance"] == pytest.approx(2e11, rel=1e-6)


def test_rows_of_two_and_three_values_cannot_be_mixed(client):
    test = synthetic_points(3e5, with_pressure=True)
    test["points"][3] = test["points"][3][:2]
    assert "[time, volume, pressure]" in errors_of(post(client, {"tests": [test]}))["tests.0.points"]


def test_an_unknown_model_or_basis_is_a_422_naming_it(client):
    errs = errors_of(post(client, {"tests": [synthetic_points(3e5)], "model": "quadratic", "pressure_basis": "x"}))
    assert "model" in errs and "classic" in errs["model"] and "three_parameter" in errs["model"]
    assert "pressure_basis" in errs and "cake" in errs["pressure_basis"]


def test_reference_pressure_defaults_to_the_geometric_mean_and_for_cycle_carries_the_errors(client):
    # readings built with alpha at the whole pressure drop: evaluated on that (total) basis
    data = post(client, {"tests": [synthetic_points(1e5, alpha=1e11), synthetic_points(4e5, alpha=2e11),
                                   synthetic_points(2e5, alpha=1.4142e11)], "pressure_basis": "total"}).json()
    assert data["reference_pressure"] == pytest.approx(2e5, rel=1e-9)
    assert data["compressibility"] == pytest.approx(0.5, abs=1e-3)
    assert data["tested_pressure_range"] == [1e5, 4e5]
    fc = data["for_cycle"]
    assert fc["cake"]["pressure_basis"] == "total"
    for key in ("resistance", "reference_pressure", "compressibility", "resistance_stderr",
                "compressibility_stderr", "pressure_basis", "tested_pressure_range"):
        assert key in fc["cake"], key
    for key in ("medium_resistance", "medium_resistance_stderr", "resistance_medium_correlation"):
        assert key in fc, key
    # straight into a cycle at 7 bar: outside the tested pressures, said in the unit typed
    cycle = {"slurry": {"solids_mass_fraction": "5 %", "solids_density": 2600, "viscosity": 1e-3},
             "cake": {**fc["cake"], "porosity": 0.5}, "press": {"filter_area": 20, "chamber_thickness": "30 mm"},
             "feed": {"mode": "constant_pressure", "pressure": "7 bar"}, "cycle": {"downtime": "20 min"},
             **{k: v for k, v in fc.items() if k != "cake"}}
    res = client.post("/api/v1/cycle", json=cycle)
    assert res.status_code == 200, res.text
    assert any("7 bar" in w and "1 to 4 bar" in w for w in res.json()["warnings"])
    assert res.json()["uncertainty"] is not None


# ---- compression-permeability tables (synthetic from known laws, seeded; derived here) ----

def compression_csv(rng=None, porosity=False):
    from server.solver.locallaws import TillerLeu

    law = TillerLeu(5e10, 0.7, 0.25, 0.12, 2e4)
    p = np.geomspace(5e3, 2e6, 10)
    noise = (lambda: np.exp(rng.normal(0, 0.02, p.size))) if rng is not None else (lambda: np.ones(p.size))
    a, e = law.local_resistance(p) * noise(), law.local_solidosity(p) * noise()
    head = "stress [kPa]; alpha [m/kg]; " + ("porosity [%]" if porosity else "solidosity [-]")
    rows = [f"{float(x) / 1e3!r}; {float(y)!r}; {float(100 * (1 - z) if porosity else z)!r}" for x, y, z in zip(p, a, e)]
    return law, head + "\n" + "\n".join(rows)


@pytest.mark.parametrize("porosity", [False, True])
def test_compression_table_gives_the_local_laws_and_a_cycle_ready_cake(client, porosity):
    law, csv = compression_csv(porosity=porosity)
    r = client.post("/api/v1/compression-fit", json={"csv": csv})
    assert r.status_code == 200, r.text
    data = r.json()
    for name in ("resistance_at_zero_stress", "resistance_exponent", "solidosity_at_zero_stress",
                 "solidosity_exponent", "stress_scale"):
        assert data["local"][name] == pytest.approx(getattr(law, name), rel=1e-3), name
    cycle = {"slurry": {"solids_mass_fraction": "20 %", "solids_density": 2600, "viscosity": 1e-3},
             "cake": data["for_cycle"]["cake"], "medium_resistance": 5e10,
             "press": {"filter_area": 20, "chamber_thickness": "30 mm"},
             "feed": {"mode": "constant_pressure", "pressure": "6 bar"}, "cycle": {"downtime": "20 min"}}
    res = client.post("/api/v1/cycle", json=cycle)
    assert res.status_code == 200, res.text
    assert res.json()["derived"]["resistance_at_feed"] == pytest.approx(law.average_resistance(6e5), rel=1e-3)


def test_compression_table_errors_name_the_line(client):
    _, csv = compression_csv()
    bad = csv.replace("\n", "\nten; 1e11; 0.3\n", 1)
    r = client.post("/api/v1/compression-fit", json={"csv": bad})
    assert r.status_code == 422 and "line 2" in r.json()["detail"][0]["msg"]
    r = client.post("/api/v1/compression-fit", json={"points": [[1e4, 1e11, 1.5]] * 5})
    assert r.status_code == 422 and "points" in r.json()["detail"][0]["field"]


def test_the_lab_page_draws_the_local_laws(client):
    _, csv = compression_csv(np.random.default_rng(3))
    r = client.post("/ui/compression-fit", json={"csv": csv})
    assert r.status_code == 200, r.text
    data = r.json()
    assert set(data["figures"]) == {"local_resistance", "local_solidosity"}
    assert "local-laws" in data["html"] and "bar" in data["html"]


def test_the_uncertainty_of_c_widens_alpha_only(client):
    # alpha = 2 A^2 dP slope / (mu c): a 5 % standard error of c adds 5 % of alpha in quadrature to
    # alpha's standard error (the delta method, worked by hand here); R_m does not depend on c, so
    # its error stays and the correlation shrinks by the ratio of alpha's errors
    plain = post(client, {"tests": [EXAMPLE, PROBLEM], "reference_pressure": "1 bar", **TEXTBOOK}).json()
    with_c = post(client, {"tests": [{**EXAMPLE, "c_stderr": f"{0.05 * 23.47} kg/m^3"},
                                     {**PROBLEM, "c_stderr": "1.1735 g/L"}],
                           "reference_pressure": "1 bar", **TEXTBOOK}).json()
    for a, b in zip(plain["tests"], with_c["tests"], strict=True):
        assert b["resistance"] == a["resistance"]
        assert b["resistance_stderr"] == pytest.approx(math.hypot(a["resistance_stderr"], 0.05 * a["resistance"]),
                                                       rel=1e-9)
        assert b["medium_resistance_stderr"] == a["medium_resistance_stderr"]
        assert b["resistance_medium_correlation"] == pytest.approx(
            a["resistance_medium_correlation"] * a["resistance_stderr"] / b["resistance_stderr"], rel=1e-9)
    # one slurry for both tests: its error does not average out over them
    a, b = plain["for_cycle"]["cake"], with_c["for_cycle"]["cake"]
    assert b["resistance_stderr"] == pytest.approx(math.hypot(a["resistance_stderr"], 0.05 * a["resistance"]),
                                                   rel=1e-9)


def test_c_given_twice_is_said_in_the_lab_pages_words(client):
    # c = 200 g/L and a dry cake mass of 45 g: the message names what the page calls them, no field names
    errs = errors_of(post(client, {"tests": [{**EXAMPLE, "c": "200 g/L", "dry_cake_mass": "45 g"}]}))
    msg = errs["tests.0"]
    assert "got both c and the dry cake mass" in msg
    assert "dry solids per filtrate volume c" in msg
    assert not re.search(r"[a-z]_[a-z]", msg), msg  # no API names such as dry_cake_mass


def test_what_the_scenario_values_take_is_said_without_api_names(client):
    # exact readings (derived here): alpha falling with pressure (s < 0) and a negative cloth resistance
    # are both set to 0 for a scenario, and the warnings say so in words
    data = post(client, {"tests": [synthetic_points(1e5, alpha=2e11, R_m=-2e10),
                                   synthetic_points(4e5, alpha=1e11, R_m=-2e10)], **TEXTBOOK}).json()
    assert data["compressibility"] < 0 and data["medium_resistance"] < 0
    assert data["for_cycle"]["cake"]["compressibility"] == 0.0 and data["for_cycle"]["medium_resistance"] == 0.0
    said = [w for w in data["warnings"] if "as 0" in w]
    assert len(said) == 2, data["warnings"]
    assert any("compressibility" in w for w in said) and any("cloth resistance" in w for w in said)
    for w in data["warnings"]:
        assert "for_cycle" not in w and not re.search(r"[a-z]_[a-z]", w), w


# ---- inputs outside the trade's usual range (plausibility.LAB_USUAL; common practice, no source) ----

def input_flags(data):
    return {w["field"]: w for w in data["input_warnings"]}


@pytest.mark.parametrize("change,field,words", [
    # a bare number is SI: 100 is 100 m² (meant cm²), 3 is 3 Pa (meant bar)
    ({"area": 100}, "tests.0.area", ["100 m² (a bare number is in SI units) is outside the usual 0.001–0.05 m²",
                                     'for 100 cm², send "100 cm²"']),
    ({"pressure": 3}, "tests.0.pressure", ["3 Pa (a bare number is in SI units) is outside the usual 20000–2e6 Pa",
                                           'for 3 bar, send "3 bar"']),
    # kPa typed where bar was meant: said in the unit typed, with how many times off it is (20 / 3)
    ({"pressure": "3 kPa"}, "tests.0.pressure", ["3 kPa is outside the usual 20–2000 kPa",
                                                 "It is 6.7 times too small for the usual range: check the unit"]),
    ({"viscosity": "0.8937 Pa*s"}, "tests.0.viscosity", ["It is 180 times too large"]),  # 0.8937 / 0.005
    # the unit typed is written as the range is (it read "2.5 m^2 is outside the usual 0.001–0.05 m²")
    # 2.5 m² is 50 times the top of the range: it said "a factor of 100" (a plant-engineer check)
    ({"area": "2.5 m^2"}, "tests.0.area", ["2.5 m² is outside the usual 0.001–0.05 m²",
                                           "It is 50 times too large for the usual range: check the unit."]),
])
def test_lab_inputs_outside_the_usual_range_are_flagged_and_calculated_as_given(client, change, field, words):
    r = post(client, {"tests": [{**EXAMPLE, **change}], **TEXTBOOK})
    assert r.status_code == 200, r.text
    flags = input_flags(r.json())
    assert list(flags) == [field], flags
    for w in words:
        assert w in flags[field]["message"], flags[field]["message"]
    assert flags[field]["label"].startswith("Test 1 (Geankoplis Example 14.2-1), ")


def test_a_reference_pressure_outside_the_usual_range_is_flagged(client):
    r = post(client, {"tests": [EXAMPLE, PROBLEM], "reference_pressure": "3 kPa", **TEXTBOOK})
    assert input_flags(r.json())["reference_pressure"]["message"].startswith("3 kPa is outside the usual 20–2000 kPa")


def test_the_textbook_tests_raise_no_flag(client):
    data = post(client, {"tests": [EXAMPLE, PROBLEM], "reference_pressure": "1 bar", **TEXTBOOK}).json()
    assert data["input_warnings"] == []
    assert not any("usual" in w for w in data["warnings"])


def test_a_fitted_resistance_outside_the_usual_range_is_a_warning(client):
    # alpha = 2 A² dP (K_p/2) / (mu c): the same readings with the area read as 100 m² instead of
    # 0.0439 m² give alpha (100 / 0.0439)² times the book's, far above the usual 1e9–1e14 m/kg
    book = post(client, {"tests": [EXAMPLE], **TEXTBOOK}).json()["resistance_ref"]
    data = post(client, {"tests": [{**EXAMPLE, "area": 100}], **TEXTBOOK}).json()
    assert data["resistance_ref"] == pytest.approx(book * (100 / 0.0439) ** 2, rel=1e-9)
    said = [w for w in data["warnings"] if "specific cake resistance" in w]
    assert len(said) == 1 and "outside the usual 1e9–1e14 m/kg" in said[0], data["warnings"]
    assert f"{data['resistance_ref']:.3g}".replace("e+", "e") in said[0]
    # one slip among several tests is named
    data = post(client, {"tests": [{**EXAMPLE, "area": 100}, PROBLEM], **TEXTBOOK}).json()
    said = [w for w in data["warnings"] if "specific cake resistance" in w]
    assert len(said) == 1 and "test 1 (Geankoplis Example 14.2-1) gives" in said[0], data["warnings"]


def test_the_lab_page_shows_the_flags_in_its_words(client):
    r = client.post("/ui/lab-fit", json={"tests": [{**EXAMPLE, "pressure": "3 kPa"}], **TEXTBOOK})
    assert r.status_code == 200, r.text
    html = r.json()["html"]
    assert "Test 1 (Geankoplis Example 14.2-1), pressure drop:" in html
    assert "3 kPa is outside the usual 20–2000 kPa" in html


def test_slurry_and_cake_data_given_two_ways_at_once_are_refused(client):
    # a review found these accepted in silence after the c message was reworded (the check
    # compared against the old wording): the solver then picked one of the two values
    base = {k: v for k, v in EXAMPLE.items() if k != "c"}
    test = {**base, "solids_density": "2000 kg/m^3"}
    both_solids = {**test, "solids_mass_fraction": 0.1, "solids_concentration": "100 kg/m^3", "wet_to_dry_ratio": 2}
    msgs = errors_of(post(client, {"tests": [both_solids], **TEXTBOOK}))
    assert any("solids_mass_fraction" in m and "solids_concentration" in m for m in msgs.values()), msgs
    both_liquid = {**test, "solids_mass_fraction": 0.1, "moisture": "50 %", "wet_to_dry_ratio": 2.5}
    msgs = errors_of(post(client, {"tests": [both_liquid], **TEXTBOOK}))
    assert any("moisture" in m and "wet_to_dry_ratio" in m for m in msgs.values()), msgs
    one_each = {**test, "solids_mass_fraction": 0.1, "wet_to_dry_ratio": 2.5}
    assert post(client, {"tests": [one_each], **TEXTBOOK}).status_code == 200


def test_the_lab_page_names_one_test_pressure_once(client):
    # "tests from 3.00 to 3.00 bar" for tests at one pressure (a plant-engineer check)
    one = client.post("/ui/lab-fit", json={"tests": [{**EXAMPLE, "pressure": "3 bar"}], **TEXTBOOK}).json()["html"]
    two = client.post("/ui/lab-fit", json={"tests": [{**EXAMPLE, "pressure": "3 bar"},
                                                     {**PROBLEM, "pressure": "6 bar"}], **TEXTBOOK}).json()["html"]
    assert "tests at 3.00 bar." in one and "tests from" not in one
    assert "tests from 3.00 to 6.00 bar." in two
