"""Outside tools the tests drive (ngspice, Chromium): find them or say why not.

Locally a missing tool skips the test with the reason; under ``CI=true`` the
same absence fails loudly, because CI installs every tool the suite needs
and a silent skip there would hide a whole class of checks.
"""

from __future__ import annotations

import os
import shutil

import pytest


def in_ci() -> bool:
    return os.environ.get("CI") == "true"


def require_binary(path_or_name: str) -> str:
    """Absolute path of an executable (``"ngspice"`` or ``"/usr/bin/chromium"``).

    Skips the calling test when it is missing, or fails it when ``CI=true``.
    """
    if os.sep in path_or_name:
        found = path_or_name if os.path.isfile(path_or_name) and os.access(path_or_name, os.X_OK) else None
    else:
        found = shutil.which(path_or_name)
    if found:
        return found
    reason = f"{path_or_name} was not found; this test needs it (install the Debian package that provides it)"
    if in_ci():
        pytest.fail(f"CI=true but {reason}", pytrace=False)
    pytest.skip(reason)


def run_cli(capsys, *argv: str) -> tuple[int, str, str]:
    """Run ``ohmpick`` in-process: (exit status, stdout, stderr)."""
    from app import cli

    code = cli.main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err
