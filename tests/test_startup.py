"""Starting permq loads only what a statement needs: importing the package or the command line,
and running a trivial statement, never loads scipy.stats, pandas, numba, matplotlib or dask (they
load on first use), so the start-up cannot creep back. Checked in fresh processes (sys.modules),
not timed."""
import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
HEAVY = ["scipy.stats", "scipy.special", "pandas", "numba", "matplotlib", "dask", "distributed"]


def _loaded(code: str) -> list:
    probe = (code + "\nimport sys, json\n"
             f"print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))")
    out = subprocess.run([sys.executable, "-c", probe], cwd=ROOT, capture_output=True, text=True,
                         timeout=120)
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout.strip().splitlines()[-1])


@pytest.mark.parametrize("module", ["permq", "permq.frontends.cli", "permq.frontends.shell"])
def test_importing_loads_no_heavy_library(module):
    assert _loaded(f"import {module}") == []


@pytest.mark.parametrize("statement", [
    "compare [1.2, 3.4, 2.2, 5.1] vs [4.1, 5.0, 3.3, 6.2]",
    "compare [1.2, 3.4, 2.2, 5.1] vs [4.1, 5.0, 3.3, 6.2] using ranks",
    "compare [0.4, -1.2, 2.2, 0.9, 1.4, -0.3] vs 0",
    "compare [1.2, 3.4, 2.2, 5.1, 0.7] vs [4.1, 5.0, 3.3, 6.2, 4.4] sampled 5000 seed 3",
])
def test_a_trivial_statement_loads_no_heavy_library(statement):
    code = ("import permq\n"
            f"[r] = permq.run({statement!r})\n"
            "assert hasattr(r, 'outcome'), r.message")
    assert _loaded(code) == []


def test_a_statement_that_needs_scipy_stats_still_gets_it():
    code = ("import permq\n"
            "[r] = permq.run('compare [1.2, 3.4, 2.2] vs [4.1, 5.0, 3.3] vs [0.3, 1.1, 0.8]')\n"
            "assert hasattr(r, 'outcome'), r.message")
    assert "scipy.stats" in _loaded(code)
