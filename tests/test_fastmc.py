"""The compiled Monte Carlo loops (C, numba) and their numpy path draw the same arrangements and
give the same numbers bit for bit; the draws are uniform; the p-value does not depend on the
number of worker threads."""
from pathlib import Path

import numpy as np
import pytest

from permq.engine.montecarlo import draws as fastmc, native, sampling
from permq.engine import twosample

ROOT = Path(__file__).resolve().parents[1]
PATHS = ["numpy", "numba"] + (["c"] if native.library() is not None else [])


def _same(results):
    """Every path's output equals the first one's, array for array, bit for bit."""
    first = results[0]
    for other in results[1:]:
        for a, b in zip(first, other):
            if a is None:
                assert b is None
            else:
                np.testing.assert_array_equal(a, b)


def test_the_c_loops_are_built_in_a_source_checkout():
    # a source checkout builds them on first use where a compiler exists (CI and developers)
    if native.compiler() is None:
        pytest.skip("no C compiler on this machine: the C loops cannot be built here")
    assert native.library() is not None
    assert fastmc.backend() == "c"


def test_the_build_hooks_library_carries_its_source_checksum(tmp_path):
    # what hatch_build.py does for a wheel: compile loops.c; native.py refuses a stale library
    if native.compiler() is None:
        pytest.skip("no C compiler on this machine: the C loops cannot be built here")
    target = tmp_path / "_loops.so"
    assert native.build(target)
    lib = native._load(target)
    assert lib is not None and lib.permq_source_crc() == native.source_crc()
    stale = tmp_path / "stale.c"
    stale.write_text(native.SOURCE.read_text() + "\n/* another version */\n")
    assert native.build(tmp_path / "_old.so", stale)
    assert native._load(tmp_path / "_old.so").permq_source_crc() != native.source_crc()


@pytest.mark.parametrize("decimals", [0, 2, None])
@pytest.mark.parametrize("n1", [3, 9, 20])   # undoing the swaps, or copying back
def test_subset_sums_agree_on_every_path(decimals, n1):
    rng = np.random.default_rng(11)
    a = rng.normal(size=23)
    a = np.round(a, decimals) if decimals is not None else a
    r = fastmc.random_u32(np.random.default_rng(3), 500, n1)
    for sums_only in (True, False):
        _same([fastmc.subset_sums(a, n1, r, compiled=p, sums_only=sums_only) for p in PATHS])


@pytest.mark.parametrize("n1, N, size", [(3, 23, 500), (20, 23, 257), (100, 200, 1001),
                                         (1, 4, 3), (7, 60, 2)])
@pytest.mark.parametrize("scores", ["decimals", "whole", "whole-negative", "huge"])
def test_subset_sums_drawn_in_the_loop_match_drawing_first(n1, N, size, scores):
    # the C loops step numpy's PCG64 themselves: the same integers as random_u32, the same
    # numbers as the numpy path, and the generator left where random_u32 leaves it; whole
    # scores take the packed integer loop where every sum is exact
    a = np.round(np.random.default_rng(n1).normal(size=N), 2)
    if scores == "whole":
        a = np.round(a * 300); a -= a.min()
    elif scores == "whole-negative":
        a = np.round(a * 300)
    elif scores == "huge":                  # sums past 2^53: the floating-point loop
        a = np.round(a * 1e15)
    for sums_only in (True, False):
        def fresh():
            return np.random.Generator(np.random.PCG64(np.random.SeedSequence(9, spawn_key=(4,))))
        drawn, first = fresh(), fresh()
        got = [fastmc.subset_sums_drawn(a, n1, drawn, size, compiled=p, sums_only=sums_only)
               for p in PATHS]
        want = fastmc.subset_sums(a, n1, fastmc.random_u32(first, size * len(PATHS), n1),
                                  compiled="numpy", sums_only=sums_only)
        for k, (s, u) in enumerate(got):   # each call took the next `size` draws of the stream
            np.testing.assert_array_equal(s, want[0][k * size:(k + 1) * size])
            if not sums_only:
                np.testing.assert_array_equal(u, want[1][k * size:(k + 1) * size])
        assert drawn.bit_generator.random_raw() == first.bit_generator.random_raw()


def test_subsets_are_uniform():
    # 5 items, choose 2: each of the 10 subsets has probability 1/10 (chi-square check)
    a = np.array([1.0, 2.0, 4.0, 8.0, 16.0])   # subset sums identify the subsets
    r = fastmc.random_u32(np.random.default_rng(5), 50_000, 2)
    s, _ = fastmc.subset_sums(a, 2, r)
    values, counts = np.unique(s, return_counts=True)
    assert len(values) == 10
    expected = 5000
    chi2 = ((counts - expected) ** 2 / expected).sum()
    assert chi2 < 27.9   # 99.9% point of chi-square on 9 df (common practice)


@pytest.mark.parametrize("workers", [1, 2, 3])
def test_p_value_independent_of_workers(monkeypatch, workers):
    x = np.array([12.4, 13.1, 11.8, 12.9, 14.2, 12.7, 13.3, 12.2])
    y = np.array([11.2, 10.9, 11.9, 10.4, 12.1, 11.0, 11.6, 12.4, 10.8])
    monkeypatch.setattr(sampling, "default_workers", lambda: workers)
    out, iv = twosample.run("means", x, y, "two-sided", "monte-carlo", 0.95, draws=30_000, seed=9)
    ref_out, ref_iv = _reference
    assert out.p_value == ref_out.p_value
    assert iv == ref_iv


def _run_reference():
    x = np.array([12.4, 13.1, 11.8, 12.9, 14.2, 12.7, 13.3, 12.2])
    y = np.array([11.2, 10.9, 11.9, 10.4, 12.1, 11.0, 11.6, 12.4, 10.8])
    return twosample.run("means", x, y, "two-sided", "monte-carlo", 0.95, draws=30_000, seed=9)


_reference = _run_reference()


def test_full_shuffle_paths_agree():
    rng = np.random.default_rng(2)
    moving, fixed = rng.normal(size=31), rng.normal(size=31)
    r = fastmc.random_u32(np.random.default_rng(8), 400, 30)
    _same([(fastmc.shuffled_dots(moving, fixed, r, compiled=p),) for p in PATHS])


def test_full_shuffles_are_uniform():
    # 4 items: all 24 orders equally likely; moving = powers of 10 make each order's dot unique
    moving = np.array([1.0, 10.0, 100.0, 1000.0])
    fixed = np.array([1.0, 2.0, 3.0, 4.0]) * np.array([1, 7, 49, 343])
    r = fastmc.random_u32(np.random.default_rng(4), 48_000, 3)
    t = fastmc.shuffled_dots(moving, fixed, r)
    _, counts = np.unique(np.round(t, 6), return_counts=True)
    assert len(counts) == 24
    chi2 = ((counts - 2000) ** 2 / 2000).sum()
    assert chi2 < 49.7   # 99.9% point of chi-square on 23 df (common practice)


# ---------------------------------------------------------------- Kendall's S in O(n log n)

def _kendall_brute(x, y):
    n = len(x)
    return sum(np.sign(x[i] - x[j]) * np.sign(y[i] - y[j])
               for i in range(n) for j in range(i + 1, n))


@pytest.mark.parametrize("ties", ["none", "in x", "in y", "in both", "heavy"])
def test_kendall_s_agrees_on_every_path_and_with_every_pair(ties):
    rng = np.random.default_rng(21)
    n = 40
    x, y = rng.normal(size=n), rng.normal(size=n)
    if ties in ("in x", "in both"):
        x = np.round(x)
    if ties in ("in y", "in both"):
        y = np.round(y * 2)
    if ties == "heavy":                       # runs of ties longer than the insertion sort's
        x, y = rng.integers(0, 2, n).astype(float), rng.integers(0, 3, n).astype(float)
    pairs = fastmc.KendallPairs(x, y)
    r = fastmc.random_u32(np.random.default_rng(6), 300, n - 1)
    results = [(fastmc.kendall_s(pairs, r, compiled=p),) for p in PATHS]
    _same(results)
    # each draw's S is Kendall's S of x paired with the shuffled y (every pair counted)
    shuffled = fastmc._shuffled_numpy(pairs.moving, r).T
    for row in (0, 1, 299):
        assert results[0][0][row] == _kendall_brute(x, shuffled[row])


def test_kendall_s_of_long_series_beside_scipy():
    # n = 600 with ties: the compiled count against scipy's tau-b numerator on the same pairing
    from scipy import stats

    rng = np.random.default_rng(8)
    x = np.round(rng.normal(size=600), 1)
    y = np.round(rng.normal(size=600), 1)
    pairs = fastmc.KendallPairs(x, y)
    r = fastmc.random_u32(np.random.default_rng(1), 3, 599)
    s = fastmc.kendall_s(pairs, r)
    shuffled = fastmc._shuffled_numpy(pairs.moving, r).T
    n0 = 600 * 599 / 2
    for row in range(3):
        tau = stats.kendalltau(x, shuffled[row]).statistic
        n1, n2 = pairs.n_fixed_ties, pairs.n_moving_ties
        assert s[row] == pytest.approx(tau * np.sqrt((n0 - n1) * (n0 - n2)), abs=1e-6)


# ---------------------------------------------------------------- sign flips, groups

def test_sign_flip_sums_agree_on_every_path():
    rng = np.random.default_rng(12)
    for n in (1, 63, 64, 65, 130):
        w1, w2 = rng.normal(size=n), rng.normal(size=n)
        bits = fastmc.random_bits(np.random.default_rng(n), 700, n)
        for second in (None, w2):
            _same([fastmc.flip_sums(w1, bits, second, compiled=p) for p in PATHS])


def test_sign_patterns_are_uniform():
    # 3 items, weights 1, 2, 4: the 8 sign patterns have distinct sums, each probability 1/8
    bits = fastmc.random_bits(np.random.default_rng(9), 40_000, 3)
    s, _, _ = fastmc.flip_sums(np.array([1.0, 2.0, 4.0]), bits)
    _, counts = np.unique(s, return_counts=True)
    assert len(counts) == 8
    chi2 = ((counts - 5000) ** 2 / 5000).sum()
    assert chi2 < 24.3   # 99.9% point of chi-square on 7 df (common practice)


def test_group_sums_agree_on_every_path():
    rng = np.random.default_rng(13)
    a = np.round(rng.normal(size=30), 2)
    sizes = np.array([7, 11, 4, 8])
    r = fastmc.random_u32(np.random.default_rng(2), 600, 30 - 8)
    _same([(fastmc.group_sums(a, sizes, r, compiled=p),) for p in PATHS])


def test_group_assignments_are_uniform():
    # 4 items into groups of 1, 1, 2: 12 assignments, each 1/12; the first two sums name them
    a = np.array([1.0, 10.0, 100.0, 1000.0])
    r = fastmc.random_u32(np.random.default_rng(3), 36_000, 2)
    sums = fastmc.group_sums(a, np.array([1, 1, 2]), r)
    _, counts = np.unique(sums[:, 0] * 1e4 + sums[:, 1], return_counts=True)
    assert len(counts) == 12
    chi2 = ((counts - 3000) ** 2 / 3000).sum()
    assert chi2 < 31.3   # 99.9% point of chi-square on 11 df (common practice)


# ---------------------------------------------------------------- nowhere to write a cache

NO_CACHE = """
import json, sys
from numba.core import caching
caching.CacheImpl._locator_classes = []       # as with a read-only package folder and home
import numpy as np
from permq.engine.montecarlo import draws
assert draws.backend() == "numba", draws.backend()
import permq
out = {}
for text in sys.argv[1:]:
    r = permq.run(text)[-1]
    iv = r.estimate.interval if r.estimate else None
    out[text] = [r.outcome.p_value, list(iv) if iv else None]
print(json.dumps(out))
"""

NO_CACHE_STATEMENTS = [
    "compare [1.2, 3.4, 2.2, 5.1, 0.7, 2.8] vs [4.1, 5.0, 3.3, 6.2, 4.4] sampled 20000 seed 3",
    "compare [1.2, -3.4, 2.2, 5.1, 0.7, 0, 2.8] vs 0 sampled 20000 seed 3",
    "compare [1.2, 3.4, 2.2] vs [4.1, 5.0, 3.3] vs [0.3, 0.9, 1.7, 2.0] sampled 20000 seed 3",
    'load "demo/trays.csv" as trays\nrelate mass to light using kendall sampled 20000 seed 3',
]


def test_without_any_writable_cache_numba_compiles_in_memory_with_the_same_numbers(monkeypatch):
    """No folder numba may write to (C loops off): the loops compile in memory, no crash, and
    every p-value and interval equals the numpy path's."""
    import json
    import subprocess
    import sys

    import permq

    env = {**__import__("os").environ, "PERMQ_NO_C_LOOPS": "1"}
    done = subprocess.run([sys.executable, "-c", NO_CACHE, *NO_CACHE_STATEMENTS], env=env,
                          capture_output=True, text=True, timeout=600,
                          cwd=ROOT)
    assert done.returncode == 0, done.stderr[-3000:]
    compiled = json.loads(done.stdout.strip().splitlines()[-1])
    monkeypatch.setattr(fastmc, "backend", lambda compiled=True: "numpy")
    for text in NO_CACHE_STATEMENTS:
        r = permq.run(text, base_dir=ROOT)[-1]
        iv = r.estimate.interval if r.estimate else None
        plain = [r.outcome.p_value, list(iv) if iv else None]
        assert compiled[text] == plain, text
