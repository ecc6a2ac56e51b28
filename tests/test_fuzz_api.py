"""Generated requests against the app's own OpenAPI document (schemathesis).

Every operation gets at least FUZZ_CASES generated cases (more in CI than
locally by default is not wanted: the number is the same everywhere so a
local run finds what CI would). Checked on every response: no 5xx, the
status code is documented, the body matches the documented schema, and
the content type is the documented one.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

import schemathesis
from hypothesis import HealthCheck, settings
from schemathesis.specs.openapi.checks import (
    content_type_conformance,
    response_schema_conformance,
    status_code_conformance,
)
from schemathesis.checks import not_a_server_error

from app.settings import Settings
from app.web import create_app

FUZZ_CASES = int(os.environ.get("OHMPICK_FUZZ_CASES", "100"))

_DATA = Path(tempfile.mkdtemp(prefix="ohmpick-fuzz-"))
app = create_app(Settings(data_dir=_DATA))
schema = schemathesis.openapi.from_asgi("/openapi.json", app)


@schema.parametrize()
@settings(max_examples=FUZZ_CASES, deadline=None, derandomize=True,
          suppress_health_check=list(HealthCheck))
def test_operation(case):
    case.call_and_validate(checks=[not_a_server_error, status_code_conformance,
                                   content_type_conformance, response_schema_conformance])
