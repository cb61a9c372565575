"""Which cycle requests run at once on the event loop and which in a worker thread under the
time budget (server/routers/cycle.py, server/budget.py)."""

import json
from pathlib import Path

import anyio.to_thread
import pytest

from server.routers.cycle import solves_quickly
from server.schemas.cycle import CycleRequest

DEMOS = Path(__file__).resolve().parents[1] / "demo_cases"


def demo(name):
    return json.loads((DEMOS / f"{name}.json").read_text())["inputs"]


@pytest.fixture
def thread_hops(monkeypatch):
    """The requests' hops to a worker thread, counted."""
    hops = []
    real = anyio.to_thread.run_sync

    async def counted(fn, *args, **kwargs):
        hops.append(fn)
        return await real(fn, *args, **kwargs)

    monkeypatch.setattr(anyio.to_thread, "run_sync", counted)
    return hops


PUMP = demo("kaolin_pump_fed")


@pytest.mark.parametrize("name, quick, change", [
    ("gypsum_chamber_limited", True, {}), ("copper_concentrate", True, {}), ("iron_oxide_pigment", True, {}),
    # a pump on its table (the wash at the end pressure) runs at once; one that needs a scan,
    # extra solves or stages goes to a worker thread under the budget
    ("kaolin_pump_fed", True, {}),
    ("kaolin_pump_fed", False, {"cycle": {**PUMP["cycle"], "wash_ratio": 1.0, "wash_pressure": "5 bar"}}),
    ("kaolin_pump_fed", False, {"cake": {**PUMP["cake"], "resistance_stderr": "2e11 m/kg"}}),
    ("kaolin_pump_fed", False, {"compare_thicknesses": [f"{20 + 2 * i} mm" for i in range(13)]}),
    ("kaolin_pump_fed", False, {"feed": {**PUMP["feed"], "points": [[f"{i * 0.4} m^3/h", f"{8.5 - i * 0.03} bar"]
                                                                    for i in range(201)]}}),
    ("kaolin_pump_fed", False, {"cycle": {**PUMP["cycle"], "squeeze": {
        "pressure": "15 bar", "consolidation_coefficient": "2e-7 m^2/s", "final_porosity": "40 %", "time": "10 min"}}}),
])
def test_constant_pressure_and_a_pump_on_its_table_run_at_once_others_under_the_budget(client, thread_hops, name,
                                                                                       quick, change):
    inputs = {**demo(name), **change}
    request = CycleRequest.model_validate(inputs)
    assert solves_quickly(request) is quick
    assert request.solves_in_closed_form == (name == "gypsum_chamber_limited")  # the cake basis is tabulated
    r = client.post("/api/v1/cycle", json=inputs)
    assert r.status_code == 200 and r.json()["best"]["filtrate_throughput"] > 0
    assert len(thread_hops) == (0 if quick else 1)
