"""The compiled Monte Carlo loop and its numpy fallback draw the same subsets; the p-value does
not depend on the number of worker threads."""
import numpy as np
import pytest

from permq.engine.montecarlo import draws as fastmc, sampling
from permq.engine import twosample


def test_compiled_and_numpy_paths_agree_exactly():
    rng = np.random.default_rng(11)
    a = rng.normal(size=23)
    r = fastmc.random_u32(np.random.default_rng(3), 500, 9)
    compiled = fastmc.subset_sums(a, 9, r, compiled=True)
    plain = fastmc.subset_sums(a, 9, r, compiled=False)
    np.testing.assert_allclose(compiled[0], plain[0], rtol=1e-12)
    np.testing.assert_array_equal(compiled[1], plain[1])
    np.testing.assert_allclose(compiled[2], plain[2], rtol=1e-12, atol=1e-12)


def test_subsets_are_uniform():
    # 5 items, choose 2: each of the 10 subsets has probability 1/10 (chi-square check)
    a = np.array([1.0, 2.0, 4.0, 8.0, 16.0])   # subset sums identify the subsets
    r = fastmc.random_u32(np.random.default_rng(5), 50_000, 2)
    s, _, _ = fastmc.subset_sums(a, 2, r)
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
    np.testing.assert_allclose(fastmc.shuffled_dots(moving, fixed, r, compiled=True),
                               fastmc.shuffled_dots(moving, fixed, r, compiled=False), rtol=1e-12)


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
