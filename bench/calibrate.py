"""Calibrate the planner's cost model on this machine: run designs of several sizes with each
exact algorithm and Monte Carlo, compare the measured time with the estimate, and write the
median ratio per (engine, algorithm) to permq/plan/calibration.json.

    python bench/calibrate.py           # measure and write
    python bench/calibrate.py --check   # measure only: print estimate vs measured, ratios
"""
from __future__ import annotations

import argparse
import json
import statistics
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from permq.bind.binder import bind  # noqa: E402
from permq.bind.common import Catalog, Defaults  # noqa: E402
from permq.data.tables import Table  # noqa: E402
from permq.engine.core.progress import NO_PROGRESS  # noqa: E402
from permq.families.registry import family_for  # noqa: E402
from permq.plan import cost  # noqa: E402
from permq.syntax import parse_statement  # noqa: E402


def lst(a):
    return "[" + ", ".join(f"{v:g}" for v in a) + "]"


def designs(rng):
    out = []
    for n in (8, 12, 15, 20):
        x, y = np.round(rng.normal(20, 3, n), 2), np.round(rng.normal(21, 3, n), 2)
        out.append(f"compare {lst(x)} vs {lst(y)}")
        out.append(f"compare {lst(x)} vs {lst(y)} using ranks")
        out.append(f"compare {lst(x)} vs {lst(y)} sampled 50000 seed 1")
        out.append(f"compare {lst(x)} vs {lst(y)} sampled 1000000 seed 1")
    for n in (6, 8, 10):
        x, y = rng.normal(size=n), rng.normal(size=n)
        out.append(f"compare {lst(x)} vs {lst(y)} using normal-scores")
    for n in (20, 40, 60):
        d = np.round(rng.normal(0.2, 1, n), 2)
        out.append(f"compare {lst(d)} vs 0")
        out.append(f"compare {lst(d)} vs 0 using ranks")
        out.append(f"compare {lst(d)} vs 0 sampled 500000 seed 1")
    for k, m in ((3, 5), (3, 8), (4, 5)):
        g = [rng.integers(1, 9, m).astype(float) for _ in range(k)]
        out.append("compare " + " vs ".join(lst(v) for v in g) + " using ranks")
        out.append("compare " + " vs ".join(lst(v) for v in g) + " ordered using ranks")
        out.append("compare " + " vs ".join(lst(v) for v in g))
        out.append("compare " + " vs ".join(lst(v) for v in g) + " sampled 200000 seed 1")
    for shape, n in (((3, 4), 60), ((2, 6), 120), ((4, 4), 50), ((3, 3), 40)):
        t = rng.multinomial(n, np.full(shape[0] * shape[1], 1 / (shape[0] * shape[1]))).reshape(shape)
        out.append("count [" + ", ".join(lst(r) for r in t) + "]")
    for n in (20, 50, 200):
        out.append(("relate y to x using kendall", n))
        out.append(("relate y to x sampled 20000 seed 1", n))
    return out


def measure(item, rng):
    tables = {}
    if isinstance(item, tuple):
        text, n = item
        x = rng.normal(size=n)
        tables["d"] = Table("d", pd.DataFrame({"x": x, "y": 0.2 * x + rng.normal(size=n)}))
    else:
        text = item
    catalog = Catalog(tables, "d" if tables else None)
    defaults = Defaults(budget_seconds=60.0)
    design = bind(parse_statement(text), catalog, defaults)
    handler = family_for(design)
    plan = handler.plan(design)
    raw = cost.calibration()
    factor = raw.get((plan.engine, plan.chosen.algorithm), 1.0)
    estimate = (plan.chosen.seconds - cost.BASE_SECONDS) / factor   # uncalibrated, no base
    best = float("inf")
    for _ in range(2):
        t = time.perf_counter()
        handler.execute(design, plan, NO_PROGRESS, text)
        best = min(best, time.perf_counter() - t)
    return plan.engine, plan.chosen.algorithm, estimate, best, factor


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--check", action="store_true")
    args = ap.parse_args()
    rng = np.random.default_rng(7)
    ratios, rows = {}, []
    for item in designs(rng):
        engine, alg, est, took, factor = measure(item, rng)
        rows.append((engine, alg, est * factor + cost.BASE_SECONDS, took))
        if took > 0.02:                          # below that, the base cost dominates
            ratios.setdefault(f"{engine}/{alg}", []).append(
                max(took - cost.BASE_SECONDS, 1e-4) / max(est, 1e-9))
    print(f"{'engine/algorithm':<34} {'predicted':>10} {'measured':>10} {'ratio':>7}")
    for engine, alg, pred, took in rows:
        print(f"{engine + '/' + alg:<34} {pred:10.4f} {took:10.4f} {took / max(pred, 1e-9):7.2f}")
    factors = {k: statistics.median(v) for k, v in ratios.items()}
    if not args.check:
        cost.CALIBRATION_FILE.write_text(json.dumps(
            {"machine": "2-core CPU (calibrated by bench/calibrate.py)", "factors": factors},
            indent=2, sort_keys=True) + "\n")
        print("wrote", cost.CALIBRATION_FILE)


if __name__ == "__main__":
    main()
