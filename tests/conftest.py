"""Shared fixtures.

* ``require_tool``: a callable, ``require_tool("ngspice")`` or
  ``require_tool("/usr/bin/chromium")`` returns the executable's path, skips
  the test when it is missing, and fails it instead when ``CI=true``
  (the plain function is :func:`tests.tools.require_binary`).
* ``ngspice``: the path of ngspice under the same rule.
* Hypothesis runs without a per-example deadline: the machine is shared and
  a timing flake is not a finding.
"""

from __future__ import annotations

import sys
from pathlib import Path

# Helpers live in the ``tests`` namespace (tests.tools, tests.spice); make the
# repository root importable however pytest was started.
_ROOT = str(Path(__file__).resolve().parent.parent)
if _ROOT not in sys.path:
    sys.path.insert(0, _ROOT)

import pytest  # noqa: E402
from hypothesis import settings  # noqa: E402

from tests.tools import in_ci, require_binary  # noqa: E402

settings.register_profile("ohmpick", deadline=None)
settings.load_profile("ohmpick")

__all__ = ["require_binary", "in_ci"]


@pytest.fixture
def require_tool():
    return require_binary


@pytest.fixture
def ngspice() -> str:
    return require_binary("ngspice")


@pytest.fixture
def app_factory(tmp_path):
    """Build a fresh app on a temporary data folder (and the demo parts)."""
    from app.settings import Settings
    from app.web import create_app

    def make(**settings):
        settings.setdefault("data_dir", tmp_path / "data")
        return create_app(Settings(**settings))

    return make


@pytest.fixture
def client(app_factory):
    from fastapi.testclient import TestClient

    with TestClient(app_factory(), raise_server_exceptions=False) as c:
        yield c


@pytest.fixture(scope="module")
def live_server(tmp_path_factory):
    """A real uvicorn server on a random loopback port, shared by a module's tests."""
    from tests.live import LiveServer

    with LiveServer(tmp_path_factory.mktemp("live-data")) as server:
        yield server


@pytest.fixture(scope="module")
def browser():
    from tests.live import chromium

    with chromium() as b:
        yield b


@pytest.fixture
def request_file(tmp_path):
    """Write a CLI request body (dict or raw text) to a file and return its path."""
    import json

    def write(body, name="request.json"):
        path = tmp_path / name
        path.write_text(body if isinstance(body, str) else json.dumps(body), encoding="utf-8")
        return str(path)

    return write

