"""Running ngspice as the circuit oracle (batch mode, one RESULT line per netlist)."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

from partsdb.spice import parse_result


def require_ngspice() -> str:
    """Path of ngspice; skip with the reason when absent, but fail when CI is set."""
    path = shutil.which("ngspice")
    if path is None:
        reason = "ngspice is not on PATH (apt-get install ngspice)"
        if os.environ.get("CI"):
            pytest.fail(f"CI must run the ngspice comparisons: {reason}")
        pytest.skip(reason)
    return path


def run_netlist(netlist: str, workdir: Path) -> dict[str, float]:
    """Run ``netlist`` with ``ngspice -b`` and return the RESULT values (SI, signed)."""
    exe = require_ngspice()
    cir = workdir / "stage.cir"
    cir.write_text(netlist)
    done = subprocess.run([exe, "-b", str(cir)], capture_output=True, text=True, timeout=60,
                          check=False)
    assert done.returncode == 0, f"ngspice failed:\n{done.stdout}\n{done.stderr}"
    return parse_result(done.stdout)
