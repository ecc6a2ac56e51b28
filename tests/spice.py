"""Run ngspice as an outside reference: one netlist in, operating point out.

``op(lines)`` writes the netlist into a temporary folder, runs
``ngspice -b`` on it with a timeout and returns every node voltage, every
voltage-source branch current (``"v1#branch"``) and each requested probe
(``"@r1[p]"``, ``"@r1[i]"``, ``"@r1[resistance]"``), keys in lower case as
ngspice prints them. Values are printed with 16 significant digits
(``numdgt=15``), enough for checks at 1e-6 relative and far below.

ngspice quirks met while writing these tests (ngspice-39):
* in ``{...}`` expressions ``x**3`` with a negative ``x`` returns ``|x|**3``;
  write ``x*x*x`` for odd powers of possibly negative numbers;
* a netlist without a dot-analysis line makes ``-b`` exit with status 1,
  so the control block ends with ``quit`` and success is judged from the
  printed values instead.
"""

from __future__ import annotations

import re
import subprocess
import tempfile
from pathlib import Path
from typing import Iterable

from tests.tools import require_binary

_VALUE = re.compile(r"^\s*(\S+)\s*=\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*$")
# A warning (e.g. "resistance too low, set to 1 mOhm") changes the circuit: fail on it too.
_ERROR = re.compile(r"(^|\s)(error|fatal|warning)\b", re.IGNORECASE | re.MULTILINE)


class SpiceError(RuntimeError):
    """ngspice refused the netlist or did not print what was asked."""


def number(value: float) -> str:
    """A float as ngspice text, every digit kept (repr round-trips)."""
    return repr(float(value))


def op(netlist_lines: Iterable[str], probes: Iterable[str] = (), timeout: float = 60.0) -> dict[str, float]:
    """Operating point of the circuit in ``netlist_lines`` (elements and models, no title/.end)."""
    ngspice = require_binary("ngspice")
    probes = [p.lower() for p in probes]
    control = [".control", "set numdgt=15", "op", "print all"]
    # One probe per print line keeps the "name = value" layout for every probe.
    control += [f"print {p}" for p in probes]
    control += ["quit", ".endc"]
    text = "\n".join(["* ohmpick reference netlist", *netlist_lines, *control, ".end", ""])
    with tempfile.TemporaryDirectory(prefix="ohmpick-spice-") as tmp:
        path = Path(tmp) / "circuit.cir"
        path.write_text(text, encoding="ascii")
        done = subprocess.run(
            [ngspice, "-b", str(path)], cwd=tmp, capture_output=True, text=True, timeout=timeout
        )
    output = done.stdout + "\n" + done.stderr
    if _ERROR.search(output):
        raise SpiceError(f"ngspice reported an error or warning:\n{output}\n--- netlist ---\n{text}")
    values: dict[str, float] = {}
    for line in done.stdout.splitlines():
        match = _VALUE.match(line)
        if match:
            values[match.group(1).lower()] = float(match.group(2))
    missing = [p for p in probes if p not in values]
    if missing or not values:
        raise SpiceError(f"ngspice printed no value for {missing or 'any node'}:\n{output}")
    return values
