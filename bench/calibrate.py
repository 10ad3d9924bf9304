"""Calibrate the planner's cost model on this machine, then check it on designs it never saw.

    python bench/calibrate.py                 # fit, write permq/plan/calibration.json, check
    python bench/calibrate.py --check         # check the current calibration only
    python bench/calibrate.py --readme        # ... and write the check's figures into README.md
    options: --designs N (held-out designs, default 80), --seed S (of the held-out draw),
             --rows FILE (keep the fitting set's measurements there, or refit on them)

Fit: every design of `calibration_designs.fitting` runs through the pipeline as a user's
statement does (bind, plan, the test, estimate, normal theory, diagnostics); its measured
wall time T (best of two runs after an untimed one, and planned after it) is modelled as
base + sum_j f_j e_j, where e_j are the plan's uncalibrated estimates of the chosen
algorithm ("engine/algorithm") and of each other part of the statement ("statement/part").
The factors f_j and one fixed cost per engine and family come from one non-negative
least-squares fit of the relative errors (every design counts alike), refitted once without
the designs more than 3x off; a family the set lacks takes its engine's median. Memory: the
peak bytes traced while the statement runs (tracemalloc: every numpy and Python allocation),
over the least peak of that engine's tiny statements (its base bytes), divided by
the chosen algorithm's estimate; the median per algorithm is its memory factor.

Check: designs drawn at random (another seed, wider ranges: `random_design`), kept when the
plan predicts under MAX_PREDICTED seconds (so the check ends), none of them in the fitting
set. For each: predicted vs measured time, estimated vs real peak memory; the summary gives
the share within 2x and the largest ratio. Timings are wall-clock on a shared 2-core machine:
run it when the machine is otherwise idle.
"""
from __future__ import annotations

import argparse
import json
import re
import statistics
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "bench"))

from calibration_designs import fitting, random_design  # noqa: E402
from permq.bind.binder import bind  # noqa: E402
from permq.bind.common import Catalog, Defaults  # noqa: E402
from permq.data.tables import Table  # noqa: E402
from permq.engine.core.progress import NO_PROGRESS  # noqa: E402
from permq.errors import PermqError  # noqa: E402
from permq.pipeline import analyse, whole_plan  # noqa: E402
from permq.families.registry import family_for  # noqa: E402
from permq.plan import cost  # noqa: E402
from permq.syntax import parse_statement  # noqa: E402

MAX_PREDICTED = 8.0          # held-out designs predicted longer than this are drawn again
TINY = 0.02                  # statements shorter than this measure the base cost


class Design:
    def __init__(self, text, tables):
        self.text = text
        self.catalog = Catalog({k: Table(k, v) for k, v in (tables or {}).items()},
                               "d" if tables else None)
        self.defaults = Defaults()
        self.node = parse_statement(text)
        self.design = bind(self.node, self.catalog, self.defaults)
        self.plan = whole_plan(family_for(self.design), self.design, self.node)

    @property
    def key(self) -> str:
        return f"{self.plan.engine}/{self.plan.chosen.algorithm}"

    @property
    def fixed_key(self) -> str:
        """Whose fixed cost the statement carries: its engine and family."""
        return f"{self.plan.engine}/{self.plan.family}"

    def components(self) -> dict:
        """Uncalibrated estimated seconds of the chosen algorithm and of each other part."""
        c = self.plan.chosen
        factor = cost.calibration().get(tuple(self.key.split("/", 1)), 1.0)
        out = {self.key: (c.ops / factor) / cost.OPS_PER_SECOND}
        for p in self.plan.parts:
            k = f"statement/{p.key}"
            out[k] = out.get(k, 0.0) + p.ops / cost.OPS_PER_SECOND
        return out

    def algorithm_bytes(self) -> float:
        """The chosen algorithm's uncalibrated estimate, 0 when another part needs more."""
        factor = cost.memory_calibration().get(tuple(self.key.split("/", 1)), 1.0)
        own = self.plan.chosen.memory / factor
        return own if own >= max([p.memory for p in self.plan.parts], default=0.0) else 0.0

    def run(self) -> None:
        analyse(self.node, self.text, self.catalog, self.defaults, NO_PROGRESS)

    def seconds(self, repeat: int = 2) -> float:
        """Best of `repeat` timed runs after one untimed run, and the plan made again after
        that run: what is loaded once per process (compiled loops, a module's import) is
        neither timed nor predicted, so the estimate and the time speak of the same work."""
        self.run()
        self.plan = whole_plan(family_for(self.design), self.design, self.node)
        best = float("inf")
        for _ in range(repeat):
            t = time.perf_counter()
            self.run()
            best = min(best, time.perf_counter() - t)
        return best

    def peak_bytes(self) -> float:
        tracemalloc.start()
        try:
            tracemalloc.reset_peak()
            before = tracemalloc.get_traced_memory()[0]
            self.run()
            return float(tracemalloc.get_traced_memory()[1] - before)
        finally:
            tracemalloc.stop()


# ---------------------------------------------------------------- fitting

def fit(rows: list) -> tuple[dict, dict]:
    """Non-negative least squares on relative errors: T = base + sum_j f_j e_j, one fixed cost
    per engine and family (its binding, setup, estimate and result differ) and one factor per
    part."""
    from scipy.optimize import nnls

    engines = sorted({engine for engine, _, _ in rows})
    keys = sorted({k for _, comps, _ in rows for k in comps})
    A = np.array([[float(engine == e) for e in engines] + [comps.get(k, 0.0) for k in keys]
                  for engine, comps, _ in rows])
    T = np.array([took for *_, took in rows])
    use = np.ones(len(rows), dtype=bool)
    for _ in range(2):
        coef, _ = nnls(A[use] / T[use, None], np.ones(int(use.sum())))
        ratio = (A @ coef) / T
        keep = (ratio >= 1 / 3) & (ratio <= 3)
        if keep.sum() > len(keys) + len(engines):
            use = keep
    # an engine's fixed cost is what its tiny statements take beyond their parts (the joint fit
    # trades it against the parts that grow slowest); the parts are then fitted again on it
    E, P = A[:, :len(engines)], A[:, len(engines):]
    bases = coef[:len(engines)].copy()
    resid = T - P @ coef[len(engines):]
    for j in range(len(engines)):
        tiny = (E[:, j] > 0) & (T < TINY)
        if tiny.any():
            bases[j] = max(float(np.median(resid[tiny])), 0.5 * float(T[tiny].min()))
    rest = T - E @ bases
    part, _ = nnls(P[use] / T[use, None], rest[use] / T[use])
    # a part the fit finds negligible keeps a fiftieth of its count (left out, it would fall
    # back to the uncalibrated factor of 1)
    factors = {k: max(float(f), 0.02) for k, f in zip(keys, part)}
    return factors, {e: max(float(b), 1e-4) for e, b in zip(engines, bases)}


def memory_fit(rows: list, bases: dict, common: float) -> dict:
    per: dict = {}
    for fixed, key, est, peak in rows:
        base = bases.get(fixed, bases.get(fixed.split("/")[0], common))
        if est >= 1e6 and peak > base:
            per.setdefault(key, []).append((peak - base) / est)
    return {k: float(statistics.median(v)) for k, v in per.items()}


def calibrate(seed: int, rows_file: str = "") -> None:
    """Measure the fitting set (or read what an earlier run measured, `--rows`), fit, write."""
    if rows_file and Path(rows_file).exists():
        measured = json.loads(Path(rows_file).read_text())
    else:
        measured = measure(seed)
        if rows_file:
            Path(rows_file).write_text(json.dumps(measured))
    write_calibration(*measured)


def measure(seed: int) -> tuple:
    rng = np.random.default_rng(seed)
    rows, memory_rows, tiny = [], [], {}
    items = fitting(rng)
    for i, (text, tables) in enumerate(items):
        try:
            d = Design(text, tables)
        except PermqError as exc:
            print(f"skipped (fit): {text[:60]} ... {exc.message}")
            continue
        took = d.seconds()
        rows.append((d.fixed_key, d.components(), took))
        peak = d.peak_bytes()
        memory_rows.append((d.fixed_key, d.key, d.algorithm_bytes(), peak))
        if took < TINY:
            tiny.setdefault(d.fixed_key, []).append(peak)
        print(f"fit {i + 1:3d}/{len(items)} {d.key:<34} {took:8.3f} s {peak / 1e6:9.2f} MB",
              flush=True)
    return rows, memory_rows, tiny


def write_calibration(rows: list, memory_rows: list, tiny: dict) -> None:
    factors, bases = fit(rows)
    for engine in {k.split("/")[0] for k in bases}:
        bases[engine] = float(statistics.median(
            [b for k, b in bases.items() if k.startswith(engine + "/")]))
    # what every statement of an engine holds: the least a tiny one of it peaks at (the
    # others' parts are in their estimates)
    every_tiny = [p for peaks in tiny.values() for p in peaks]
    common_bytes = float(statistics.median(every_tiny)) if every_tiny else cost.BASE_BYTES
    # (per engine, not per family: a family with few tiny statements would take the peak of
    # its least tiny one as what every statement holds)
    bytes_by_engine = {}
    for engine in sorted({k.split("/")[0] for k in tiny}):
        bytes_by_engine[engine] = float(min(p for k, peaks in tiny.items()
                                            if k.startswith(engine + "/") for p in peaks))
    data = {"machine": "2-core CPU (calibrated by bench/calibrate.py)",
            "factors": dict(sorted(factors.items())),
            "base_seconds": float(statistics.median(bases.values())),
            "base_seconds_by_engine": dict(sorted(bases.items())),
            "memory_factors": dict(sorted(memory_fit(memory_rows, bytes_by_engine,
                                                     common_bytes).items())),
            "base_bytes": common_bytes,
            "base_bytes_by_engine": dict(sorted(bytes_by_engine.items())),
            "fitted_on": len(rows)}
    cost.CALIBRATION_FILE.write_text(json.dumps(data, indent=2) + "\n")
    cost.reload()
    print("wrote", cost.CALIBRATION_FILE)


# ---------------------------------------------------------------- the check

def check(count: int, seed: int) -> dict:
    rng = np.random.default_rng(seed)
    fitted = {text for text, _ in fitting(np.random.default_rng(7))}
    out, skipped = [], 0
    while len(out) < count:
        text, tables = random_design(rng)
        try:
            d = Design(text, tables)
        except PermqError:
            skipped += 1
            continue
        if d.plan.seconds > MAX_PREDICTED or text in fitted:
            skipped += 1
            continue
        took = d.seconds()
        peak = d.peak_bytes()
        out.append((text, d.key, d.plan.seconds, took, d.plan.memory, peak))
        print(f"check {len(out):3d}/{count} {d.key:<34} predicted {d.plan.seconds:8.3f} s "
              f"took {took:8.3f} s ({took / d.plan.seconds:5.2f}x)  memory "
              f"{d.plan.memory / 1e6:9.2f} MB, peak {peak / 1e6:9.2f} MB "
              f"({peak / d.plan.memory:5.2f}x)", flush=True)
    return summarise(out, skipped)


def summarise(out, skipped) -> dict:
    t = np.array([max(took / pred, pred / took) for _, _, pred, took, _, _ in out])
    m = np.array([max(peak / est, est / peak) for *_, est, peak in out])
    over = np.array([peak / est for *_, est, peak in out])
    big = np.array([max(est, peak) > 1e6 for *_, est, peak in out])
    worst = max(out, key=lambda r: max(r[3] / r[2], r[2] / r[3]))
    s = {"designs": len(out), "drawn_again": skipped,
         "time_within_2x": float(np.mean(t <= 2)), "time_within_4x": float(np.mean(t <= 4)),
         "time_worst": float(t.max()), "time_median": float(np.median(t)),
         "memory_within_2x": float(np.mean(m <= 2)), "memory_worst": float(m.max()),
         # where a budget bites: the designs whose estimate or peak passes 1 MB, and how
         # many peaked above their estimate (the budget's side)
         "memory_within_2x_past_1mb": float(np.mean(m[big] <= 2)) if big.any() else 1.0,
         "memory_past_1mb": int(big.sum()),
         "memory_over_2x_estimate": float(np.mean(over > 2)),
         "worst_design": f"{worst[1]}: predicted {worst[2]:.3g} s, took {worst[3]:.3g} s"}
    print(json.dumps(s, indent=2))
    return s


def readme(s: dict) -> None:
    path = ROOT / "README.md"
    text = path.read_text()
    block = (f"`python bench/calibrate.py` fits the planner's cost model on a fixed set of designs "
             f"and checks it on {s['designs']} designs drawn at random from wider ranges (none "
             f"in the fitting set; predicted under {MAX_PREDICTED:g} s). On the last run, "
             f"{s['time_within_2x']:.0%} of the whole-statement predictions were within 2x of "
             f"the measured time and {s['time_within_4x']:.0%} within 4x (median ratio "
             f"{s['time_median']:.2f}, worst {s['time_worst']:.2f}); the real peak memory "
             f"(traced allocations) was within 2x of the estimate for "
             f"{s['memory_within_2x']:.0%} of them (worst {s['memory_worst']:.2f}), and "
             f"{s['memory_over_2x_estimate']:.0%} peaked above twice their estimate (the side "
             f"a `set memory` budget depends on).\n")
    marker = re.compile(r"`python bench/calibrate.py` fits the planner.*?\n", re.S)
    if marker.search(text):
        text = marker.sub(lambda _: block, text)
    else:
        text = text.replace("## Performance\n\n", "## Performance\n\n" + block + "\n", 1)
    path.write_text(text)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--check", action="store_true", help="check only; keep the calibration")
    ap.add_argument("--readme", action="store_true", help="write the figures into README.md")
    ap.add_argument("--designs", type=int, default=80)
    ap.add_argument("--seed", type=int, default=20261203)
    ap.add_argument("--rows", default="", help="keep the fitting set's measurements in this "
                    "file, or fit on the ones it holds (to try a change of the fit alone)")
    args = ap.parse_args()
    if not args.check:
        calibrate(7, args.rows)
    summary = check(args.designs, args.seed)
    if args.readme:
        readme(summary)


if __name__ == "__main__":
    main()
