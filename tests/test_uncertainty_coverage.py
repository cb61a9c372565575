"""The cycle's uncertainty range against the truth: lab tests simulated from known resistances
(seeded, 1 % noise), fitted through /api/v1/lab-fit's path, carried by for_cycle into a cycle.
The nominal one-standard-deviation range of the best filtration time must cover the truth's
best filtration time 60-76 % of the time. Derived here."""

import numpy as np
import pytest

from server.lab import fit_request
from server.schemas.cycle import CycleRequest
from server.schemas.labfit import LabFitRequest
from server.solve import solve_results

ALPHA, R_M, MU, C_LAB = 1.5e11, 6e10, 1e-3, 40.0
PRESS = {"filter_area": 60.0, "chamber_thickness": 0.3}  # thick chambers: the optimum decides
SLURRY = {"solids_concentration": "40 kg/m^3", "solids_density": 2700.0, "viscosity": MU}


def lab_body(rng, pressures):
    tests = []
    for P in pressures:
        A = 0.01
        K_p, B = MU * ALPHA * C_LAB / (A**2 * P), MU * R_M / (A * P)
        V = np.linspace(0.2, 3.0, 12) * 1e-3
        t = (K_p / 2 * V**2 + B * V) * (1 + rng.normal(0, 0.01, V.size))
        tests.append({"pressure": P, "area": A, "viscosity": MU, "c": C_LAB,
                      "points": [[float(a), float(b)] for a, b in zip(np.sort(t), V)]})
    return {"tests": tests, "model": "classic"}


def cycle(cake, medium, extra=None):
    body = {"slurry": SLURRY, "cake": {**cake, "porosity": 0.5}, "press": PRESS,
            "feed": {"mode": "constant_pressure", "pressure": 4e5}, "cycle": {"downtime": 1200.0},
            "medium_resistance": medium, **(extra or {})}
    return solve_results(CycleRequest.model_validate(body))


@pytest.mark.slow
def test_the_68_percent_range_of_filtration_time_covers_the_truth():
    rng = np.random.default_rng(1414)
    truth = cycle({"resistance": ALPHA}, R_M)["best"]["filtration_time"]
    trials, inside = 150, 0
    for _ in range(trials):
        fit = fit_request(LabFitRequest.model_validate(lab_body(rng, [4e5])))
        fc = fit["for_cycle"]
        extra = {k: fc[k] for k in ("medium_resistance_stderr", "resistance_medium_correlation") if k in fc}
        lo, hi = cycle(fc["cake"], fc["medium_resistance"], extra)["uncertainty"]["filtration_time"]
        inside += lo <= truth <= hi
    assert 0.60 <= inside / trials <= 0.76
