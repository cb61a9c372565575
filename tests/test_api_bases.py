"""Input bases (issue 10): slurry as solids per liquid volume, cake as dry bulk density.

Each new basis is checked against the equivalent existing basis: the answers must agree to
1e-9 relative. The conversions are the saturated-cake mass balance (Coulson & Richardson's
Chemical Engineering Vol. 2, 5th ed., section 7.2: one m^3 of cake holds (1 - e) rho_s of
solids and e rho_l of liquid), worked by hand below, independently of the solver's code.
"""

import copy
import json
from pathlib import Path

import pytest

DEMOS = Path(__file__).resolve().parents[1] / "demo_cases"
RHO_L = 997.0  # given explicitly so the hand conversions need no water table


def demo(name: str) -> dict:
    inputs = json.loads((DEMOS / f"{name}.json").read_text())["inputs"]
    inputs["slurry"]["liquid_density"] = f"{RHO_L} kg/m^3"
    return inputs


def solve(client, body) -> dict:
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 200, r.text
    return r.json()


def assert_same(a, b, path="results"):
    """Every number in ``a`` equals the one in ``b`` to 1e-9 relative (input_warnings aside)."""
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for k in a:
            if k != "input_warnings":
                assert_same(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b, strict=True)):
            assert_same(x, y, f"{path}[{i}]")
    elif isinstance(a, float) and not isinstance(a, bool):
        assert b == pytest.approx(a, rel=1e-9, abs=1e-300), path
    else:
        assert a == b, path


@pytest.mark.parametrize("name", ["copper_concentrate", "iron_oxide_pigment", "kaolin_pump_fed"])
def test_solids_per_liquid_matches_the_mass_fraction(client, name):
    base = demo(name)
    x = base["slurry"].get("solids_mass_fraction")
    assert x is not None, "the listed demos give the solids mass fraction"
    x = float(str(x).split()[0]) / (100.0 if "%" in str(x) else 1.0)
    per_liquid = copy.deepcopy(base)
    del per_liquid["slurry"]["solids_mass_fraction"]
    per_liquid["slurry"]["solids_per_liquid"] = f"{x * RHO_L / (1.0 - x)!r} kg/m^3"  # x = c_L / (c_L + rho_l)
    assert_same(solve(client, base), solve(client, per_liquid))


def test_solids_per_liquid_in_grams_per_litre(client):
    base = demo("copper_concentrate")
    x = 0.58
    base["slurry"]["solids_mass_fraction"] = x
    gl = copy.deepcopy(base)
    del gl["slurry"]["solids_mass_fraction"]
    gl["slurry"]["solids_per_liquid"] = f"{x * RHO_L / (1 - x)!r} g/L"  # 1 g/L = 1 kg/m^3
    assert_same(solve(client, base), solve(client, gl))


def _porosity_of(inputs) -> tuple[float, float]:
    """(porosity, solids density) of a demo's cake given by moisture, by hand."""
    w = float(inputs["cake"]["moisture"].split()[0]) / 100.0
    rho_s = float(inputs["slurry"]["solids_density"].split()[0])
    m = 1.0 / (1.0 - w)
    liquid_per_solid = (m - 1.0) * rho_s  # liquid mass per m^3 of solids
    return liquid_per_solid / (liquid_per_solid + RHO_L), rho_s


def test_dry_bulk_density_alone_matches_the_porosity(client):
    base = demo("copper_concentrate")
    eps, rho_s = _porosity_of(base)
    by_porosity = copy.deepcopy(base)
    del by_porosity["cake"]["moisture"]
    by_porosity["cake"]["porosity"] = eps
    bulk = copy.deepcopy(by_porosity)
    del bulk["cake"]["porosity"]
    bulk["cake"]["dry_bulk_density"] = f"{(1.0 - eps) * rho_s!r} kg/m^3"
    a, b = solve(client, by_porosity), solve(client, bulk)
    assert_same(a, b)
    assert a["derived"]["dry_bulk_density"] == pytest.approx((1.0 - eps) * rho_s, rel=1e-12)


def test_dry_bulk_density_with_moisture_fixes_the_solids_density(client):
    base = demo("copper_concentrate")
    eps, rho_s = _porosity_of(base)
    bulk = copy.deepcopy(base)
    del bulk["slurry"]["solids_density"]
    bulk["cake"]["dry_bulk_density"] = f"{(1.0 - eps) * rho_s!r} kg/m^3"
    a, b = solve(client, base), solve(client, bulk)
    assert_same(a, b)
    assert b["derived"]["solids_density"] == pytest.approx(rho_s, rel=1e-9)


def test_dry_bulk_density_with_wet_to_dry_ratio(client):
    base = demo("copper_concentrate")
    eps, rho_s = _porosity_of(base)
    w = float(base["cake"]["moisture"].split()[0]) / 100.0
    bulk = copy.deepcopy(base)
    del bulk["slurry"]["solids_density"], bulk["cake"]["moisture"]
    bulk["cake"]["wet_to_dry_ratio"] = 1.0 / (1.0 - w)
    bulk["cake"]["dry_bulk_density"] = f"{(1.0 - eps) * rho_s!r} kg/m^3"
    assert_same(solve(client, base), solve(client, bulk))


def test_an_impossible_cake_is_refused_naming_both_fields(client):
    body = demo("copper_concentrate")
    del body["slurry"]["solids_density"]
    body["cake"]["moisture"] = "60 %"  # m = 2.5: 1.5 kg liquid per kg solids
    body["cake"]["dry_bulk_density"] = "1200 kg/m^3"  # 1800 kg/m^3 of liquid: more than water can fill
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 422
    detail = r.json()["detail"]
    assert {d["field"] for d in detail} == {"cake.dry_bulk_density", "cake.moisture"}
    assert "porosity 1.805" in detail[0]["msg"] and "no saturated cake" in detail[0]["msg"]


def test_bulk_density_at_or_above_the_solids_density_is_refused(client):
    body = demo("copper_concentrate")
    del body["cake"]["moisture"]
    body["cake"]["dry_bulk_density"] = "4150 kg/m^3"  # the demo's solids density: no pores
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 422
    assert {d["field"] for d in r.json()["detail"]} == {"cake.dry_bulk_density", "slurry.solids_density"}


def test_solids_density_still_required_otherwise(client):
    body = demo("copper_concentrate")
    del body["slurry"]["solids_density"]
    r = client.post("/api/v1/cycle", json=body)
    assert r.status_code == 422
    assert [d["field"] for d in r.json()["detail"]] == ["slurry.solids_density"]


def test_three_cake_facts_are_too_many(client):
    body = demo("copper_concentrate")
    body["cake"]["dry_bulk_density"] = "2500 kg/m^3"
    r = client.post("/api/v1/cycle", json=body)  # moisture + bulk density + solids density
    assert r.status_code == 422
    assert "fixes the solids density" in r.text


def test_the_chamber_volume_is_given_total_and_each(client):
    body = demo("copper_concentrate")  # 60 chambers of 1.9 m^2 per face, 40 mm
    d = solve(client, body)["derived"]
    assert d["chamber_volume"] == pytest.approx(60 * 1.9 * 0.040, rel=1e-12)
    assert d["chamber_volume_each"] == pytest.approx(1.9 * 0.040, rel=1e-12)
