"""Bounded-memory pieces of complete enumeration: the interval read from a stream of jumps
keeps only the extreme ones, and the law tallied chunk by chunk; both equal the all-at-once
computations (which hold every value)."""
import numpy as np
import pytest

from permq.engine.core.jumps import JumpStream, interval_from_jumps
from permq.engine.core.tally import Tally


@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
@pytest.mark.parametrize("level", [0.5, 0.9, 0.95, 0.99])
@pytest.mark.parametrize("seed", [1, 2, 3])
def test_streamed_jumps_give_the_interval_of_all_jumps(alternative, level, seed):
    rng = np.random.default_rng(seed)
    jumps = np.round(rng.normal(size=5000), 2)            # many ties
    jumps[rng.random(5000) < 0.01] += 1e-14               # noise that must not split ties
    identity = float(rng.integers(1, 4))
    total = jumps.size + identity
    want = interval_from_jumps(jumps, np.ones(jumps.size), identity, total, level, alternative)
    stream = JumpStream(identity, total, level, alternative)
    for part in np.array_split(rng.permutation(jumps), 37):
        stream.add(part)
    assert stream.interval() == want
    kept = sum(a.size for a in (stream.low, stream.high) if a is not None)
    assert kept <= 2 * (0.5 * (1 - level) * total + 3) or alternative != "two-sided"


def test_a_stream_too_short_for_the_level_gives_the_whole_line():
    stream = JumpStream(1.0, 10.0, 0.95, "two-sided")
    stream.add(np.arange(9.0))
    assert stream.interval() == interval_from_jumps(np.arange(9.0), np.ones(9), 1.0, 10.0,
                                                    0.95, "two-sided") == (-np.inf, np.inf)


def test_tally_in_chunks_equals_the_whole_tally():
    rng = np.random.default_rng(5)
    values = np.round(rng.normal(size=200_000), 3)
    tally = Tally(scale=10.0)
    for part in np.array_split(values, 50):
        tally.add(part + rng.normal(size=part.size) * 1e-13)
    got_v, got_c = tally.law()
    want_v, want_c = np.unique(values, return_counts=True)
    assert got_c.tolist() == want_c.tolist()
    assert np.allclose(got_v, want_v, atol=1e-9)


def test_tally_gives_up_past_its_limit_and_keeps_nothing():
    tally = Tally(scale=1.0, limit=1000)
    for start in range(0, 5000, 700):
        tally.add(np.arange(start, start + 700) * 0.5)
    assert tally.law() == (None, None)


def _sorted_ends(jumps, identity, total, level, alternative):
    """interval_from_jumps the plain way: every sampled jump sorted and merged."""
    from permq.engine.core import jumps as J

    values = np.sort(np.asarray(jumps, float))
    v, c = J._merge_equal(values, np.ones(values.size))
    side = J.alpha_side(level, alternative)
    lo, hi = -np.inf, np.inf
    if alternative in ("two-sided", "higher"):
        lo = J._end(v, c, identity, total, side, -np.inf, np.inf)
    if alternative in ("two-sided", "lower"):
        hi = J._end(v[::-1], c[::-1], identity, total, side, np.inf, -np.inf)
    return lo, hi


@pytest.mark.parametrize("alternative", ["two-sided", "higher", "lower"])
@pytest.mark.parametrize("kind", ["continuous", "grid", "near-ties", "one-group-at-the-end",
                                  "long-chain"])
@pytest.mark.parametrize("level", [0.95, 0.9, 0.999])
def test_sampled_jumps_read_from_their_ends_give_the_ends_of_the_full_sort(alternative, kind,
                                                                           level):
    # Monte Carlo intervals read the ends from the few jumps near each side: the same floats
    # as sorting every jump, with ties, 1-ulp near-ties and a tie group across the cut
    rng = np.random.default_rng(len(kind) * 7 + int(level * 1000))
    n = 120_000
    if kind == "continuous":
        jumps = rng.normal(size=n)
    elif kind == "grid":                       # unit * k / u, as the two-sample engine forms them
        k, u = rng.integers(-400, 400, n), rng.integers(1, 30, n)
        jumps = 0.01 * k / u
    elif kind == "near-ties":                  # equal jumps written one ulp apart
        base = np.round(rng.normal(size=n), 2)
        jumps = np.where(rng.random(n) < 0.5, base, np.nextafter(base, np.inf))
    elif kind == "long-chain":                 # jumps 0.9 tolerance apart: one wide group
        jumps = 1.0 + np.arange(n) * 0.9e-12 * (1.0 + n * 1e-12)
        jumps[: n // 2] = -np.abs(rng.normal(size=n // 2))     # the chain is the top
    else:                                      # every jump near the cut in one group
        jumps = rng.normal(size=n)
        order = np.sort(jumps)
        cut_lo, cut_hi = order[int(0.0005 * n)], order[-int(0.0005 * n)]
        jumps[np.abs(jumps) > min(-cut_lo, cut_hi) * 0.5] = np.where(
            jumps[np.abs(jumps) > min(-cut_lo, cut_hi) * 0.5] < 0, -3.0, 3.0)
    identity, total = 1.0 + 3, float(n + 4)
    from permq.engine.core.jumps import _ends_of_sampled

    assert _ends_of_sampled(jumps, identity, total, level, alternative) is not None   # used
    got = interval_from_jumps(jumps, None, identity, total, level, alternative)
    want = _sorted_ends(jumps, identity, total, level, alternative)
    assert [np.float64(g).tobytes() for g in got] == [np.float64(w).tobytes() for w in want]
