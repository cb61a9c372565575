"""Schema-driven fuzzing of every API operation (schemathesis, in process).

Checks: no server error, responses that match their declared schema, status codes and
content types the schema declares, allowed methods. NaN or Infinity in a body would be a
server error here: the app's JSON encoder refuses them.
Left out: "schema-valid data must be accepted" (positive_data_acceptance). The schema
states each field's range, but not the rules between fields (give exactly one of the
solids mass fraction or concentration; a wet cake must leave filtrate), so a request that
is valid field by field but physically impossible is refused with a 422 by design.
Bounded: a fixed number of examples per operation, derandomized in CI (tests/conftest.py).
"""

import pytest
import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.checks import positive_data_acceptance

from server.app import create_app
from tests.conftest import app_settings

pytestmark = pytest.mark.slow


def _app():
    import tempfile
    from pathlib import Path

    return create_app(app_settings(Path(tempfile.mkdtemp(prefix="presscycle-fuzz-"))))


schema = schemathesis.openapi.from_asgi("/openapi.json", _app())


@schema.parametrize()
@settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck))
def test_every_operation_holds_under_fuzzing(case):
    case.call_and_validate(excluded_checks=[positive_data_acceptance])
