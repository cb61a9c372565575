"""cake.pressure_basis and cake.local in /api/v1/cycle (derived here)."""

import pytest


def post(client, body):
    return client.post("/api/v1/cycle", json=body)


def errors_of(r):
    assert r.status_code == 422, r.text
    return {e["field"]: e["msg"] for e in r.json()["detail"]}


def compressible(base_request, **cake):
    base_request["cake"].update(compressibility=0.5, reference_pressure="5 bar", **cake)
    return base_request


def test_the_cake_basis_is_the_default_and_shown(client, base_request):
    data = post(client, compressible(base_request)).json()
    assert data["derived"]["pressure_basis"] == "cake"
    total = post(client, compressible(base_request, pressure_basis="total")).json()
    assert total["derived"]["pressure_basis"] == "total"
    # the early cake is looser on the cake basis: the same volume filters sooner
    assert data["best"]["filtration_time"] != pytest.approx(total["best"]["filtration_time"], rel=1e-3)


def test_an_incompressible_cake_is_the_same_on_both_bases(client, base_request):
    a = post(client, base_request).json()["best"]
    base_request["cake"]["pressure_basis"] = "total"
    b = post(client, base_request).json()["best"]
    assert a == b


def test_local_laws_with_zero_exponents_are_an_incompressible_cake(client, base_request):
    base_request["slurry"]["solids_density"] = 2600.0
    base_request["cake"] = {"resistance": 1e11, "porosity": 0.55}
    plain = post(client, base_request).json()
    base_request["cake"] = {"local": {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0,
                                      "solidosity_at_zero_stress": 0.45, "solidosity_exponent": 0,
                                      "stress_scale": "0.1 bar"}}
    local = post(client, base_request).json()
    assert local["best"]["filtration_time"] == pytest.approx(plain["best"]["filtration_time"], rel=1e-12)
    assert local["derived"]["porosity"] == pytest.approx(0.55, rel=1e-12)
    assert local["chambers_full"]["filtrate_volume"] == pytest.approx(plain["chambers_full"]["filtrate_volume"],
                                                                       rel=1e-12)


def test_local_laws_make_the_cake_denser_and_tighter_at_a_higher_pressure(client, base_request):
    base_request["cake"] = {"local": {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0.5,
                                      "solidosity_at_zero_stress": 0.35, "solidosity_exponent": 0.08,
                                      "stress_scale": "0.1 bar"}}
    low = post(client, base_request).json()["derived"]
    base_request["feed"]["pressure"] = "12 bar"
    high = post(client, base_request).json()["derived"]
    assert high["porosity"] < low["porosity"] and high["moisture"] < low["moisture"]
    assert high["resistance_at_feed"] > low["resistance_at_feed"]


def test_local_laws_and_a_resistance_together_are_refused(client, base_request):
    base_request["cake"]["local"] = {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0.5,
                                     "solidosity_at_zero_stress": 0.35, "solidosity_exponent": 0.08,
                                     "stress_scale": 1e4}
    errs = errors_of(post(client, base_request))
    assert any("leave out" in m and "resistance" in m for m in errs.values())


@pytest.mark.parametrize("field,value", [("resistance_exponent", 2.5), ("solidosity_at_zero_stress", 1.2),
                                         ("stress_scale", "-1 bar")])
def test_local_law_values_outside_their_range_are_a_422_naming_the_field(client, base_request, field, value):
    local = {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0.5, "solidosity_at_zero_stress": 0.35,
             "solidosity_exponent": 0.08, "stress_scale": 1e4, field: value}
    base_request["cake"] = {"local": local}
    errs = errors_of(post(client, base_request))
    assert f"cake.local.{field}" in errs


def test_a_solids_fraction_above_one_at_the_feed_pressure_is_refused(client, base_request):
    base_request["cake"] = {"local": {"resistance_at_zero_stress": 1e11, "resistance_exponent": 0.5,
                                      "solidosity_at_zero_stress": 0.6, "solidosity_exponent": 0.9,
                                      "stress_scale": 1.0}}
    errs = errors_of(post(client, base_request))
    assert "cake.local.solidosity_exponent" in errs and "below 1" in errs["cake.local.solidosity_exponent"]


@pytest.mark.parametrize("change,field", [({"pressure_basis": "both"}, "cake.pressure_basis"),
                                          ({"tested_pressure_range": ["5 bar", "1 bar"]}, "cake"),
                                          ({"compressibility_stderr": 2}, "cake.compressibility_stderr")])
def test_bad_basis_and_error_inputs_are_a_422(client, base_request, change, field):
    base_request["cake"].update(change)
    assert field in errors_of(post(client, base_request))


def test_a_correlation_outside_minus_one_to_one_is_a_422(client, base_request):
    base_request["resistance_medium_correlation"] = -1.5
    assert "resistance_medium_correlation" in errors_of(post(client, base_request))
