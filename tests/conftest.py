import copy
import os

import pytest
from fastapi.testclient import TestClient
from hypothesis import settings

from server.app import create_app
from server.settings import PROJECT_ROOT, Settings

# CI runs the same examples every time (a red CI must be reproducible); locally they vary.
settings.register_profile("ci", derandomize=True, print_blob=True)
if os.environ.get("CI", "").lower() == "true":
    settings.load_profile("ci")


#: A plain constant-pressure scenario in SI numbers (invented, for the API tests).
BASE_REQUEST = {
    "slurry": {"solids_mass_fraction": 0.2, "solids_density": 2600.0, "viscosity": 1.0e-3},
    "cake": {"resistance": 1.0e11, "wet_to_dry_ratio": 1.6},
    "medium_resistance": 5.0e10,
    "press": {"filter_area": 50.0, "chamber_thickness": 0.04},
    "feed": {"mode": "constant_pressure", "pressure": 5.0e5},
    "cycle": {"downtime": 1200.0},
}


def app_settings(folder) -> Settings:
    """Settings for an app under test: a database in ``folder`` and the project's demo folder,
    whatever PRESSCYCLE_* the environment exports (an exported database never gets test rows)."""
    defaults = {name: field.default for name, field in Settings.model_fields.items()}
    return Settings(**{**defaults, "db": folder / "test.sqlite3", "demo_dir": PROJECT_ROOT / "demo_cases"})


@pytest.fixture(scope="session")
def client(tmp_path_factory):
    with TestClient(create_app(app_settings(tmp_path_factory.mktemp("db")))) as c:
        yield c


@pytest.fixture
def base_request():
    return copy.deepcopy(BASE_REQUEST)
