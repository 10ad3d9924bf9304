"""README's power rows are bench's: each row of bench/power_cases.py's CASES is in README's
performance table, and its seeded figures (the n found, the sizes simulated, the closed form)
are what a fresh run of the same statement gives. A row that fails here has drifted: write it
again with `python bench/run.py --only power --readme`."""
from __future__ import annotations

import sys
from pathlib import Path

import pytest

import permq

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "bench"))

import power_cases as pc  # noqa: E402  (bench/power_cases.py)


def _row(label: str) -> str:
    rows = [line for line in (ROOT / "README.md").read_text().splitlines()
            if line.startswith(f"| {label} | ")]
    assert len(rows) == 1, f"README has {len(rows)} rows for {label!r}"
    return rows[0]


@pytest.mark.parametrize("label, text, key", pc.CASES, ids=[c[2] for c in pc.CASES])
def test_readme_power_row_is_what_the_statement_gives(label, text, key):
    row = _row(label)
    pr = permq.run(text)[-1]
    assert hasattr(pr, "needed"), pr
    assert pc.result_words(pr, key) in row
    assert pc.reference_words(pr) in row
    # the cell the target is read from: under 10 s
    seconds = float(row.split(" | ")[1].rstrip(" s"))
    assert seconds < 10
