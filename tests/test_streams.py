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
