import copy
import itertools
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


CI = os.environ.get("CI", "").lower() == "true"


@pytest.fixture(scope="session")
def pg_server():
    """A throwaway PostgreSQL server for the whole session (tests/pgserver.py), stopped at the end.
    Without the server binaries the PostgreSQL tests skip, except in CI, where they fail."""
    from tests.pgserver import PgServer, binaries

    if binaries() is None:
        message = "PostgreSQL's initdb/pg_ctl are not installed (Debian package postgresql; make test installs it)"
        if CI:
            pytest.fail(message + ": CI runs the PostgreSQL tests, it does not skip them")
        pytest.skip(message)
    server = PgServer()
    yield server
    server.stop()


_databases = itertools.count()


@pytest.fixture
def pg_url(pg_server):
    """The URL of a fresh, empty database on the session's PostgreSQL server."""
    return pg_server.new_database(f"test_{os.getpid()}_{next(_databases)}")
