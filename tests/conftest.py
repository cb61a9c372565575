import copy
import os
import tempfile

import pytest

# The app module builds its store at import: point it at a throw-away database first.
os.environ.setdefault("PRESSCYCLE_DB", os.path.join(tempfile.mkdtemp(prefix="presscycle-test-"), "test.sqlite3"))

from fastapi.testclient import TestClient  # noqa: E402
from hypothesis import settings  # noqa: E402

# CI runs the same examples every time (a red CI must be reproducible); locally they vary.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI", "").lower() == "true":
    settings.load_profile("ci")

from server.app import create_app  # noqa: E402

#: A plain constant-pressure scenario in SI numbers (invented, for the API tests).
BASE_REQUEST = {
    "slurry": {"solids_mass_fraction": 0.2, "solids_density": 2600.0, "viscosity": 1.0e-3},
    "cake": {"resistance": 1.0e11, "wet_to_dry_ratio": 1.6},
    "medium_resistance": 5.0e10,
    "press": {"filter_area": 50.0, "chamber_thickness": 0.04},
    "feed": {"mode": "constant_pressure", "pressure": 5.0e5},
    "cycle": {"downtime": 1200.0},
}


@pytest.fixture(scope="session")
def client():
    with TestClient(create_app()) as c:
        yield c


@pytest.fixture
def base_request():
    return copy.deepcopy(BASE_REQUEST)
