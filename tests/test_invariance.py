"""Invariances every exact p-value keeps, for every engine and family, on data drawn by
hypothesis with offsets up to 1e6 and 1 to 4 decimals: adding a constant, multiplying by 10^k,
reordering the rows, relabelling the groups (or blocks) and swapping two groups (the effect's
sign flips, so does a one-sided alternative) leave the exact p-value as it is; each p-value
also equals the brute-force reference (tests/brute.py: every arrangement listed, in exact
fractions from the decimals as written).

Monte Carlo p-values with a seed are compared too: on a decimal grid every engine draws on the
grid's integers, which no offset or power of ten changes, so the same seed gives the same p.
"""
from fractions import Fraction

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

import brute
import permq
from permq.engine import association, blocks, ksample, onesample, ordered, twosample
from permq.engine.tables import rxc

FLIP = {"higher": "lower", "lower": "higher", "two-sided": "two-sided"}
ALTERNATIVES = ("two-sided", "higher", "lower")
SEED, DRAWS = 5, 2000

# bounded runs without shrinking (a failure prints the example as drawn, at once)
BOUNDED = settings(max_examples=12, deadline=None, derandomize=True,
                   phases=[Phase.explicit, Phase.reuse, Phase.generate],
                   suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


@st.composite
def transforms(draw):
    """(decimals, offset, power): values k / 10^decimals, then + offset, or x 10^power."""
    decimals = draw(st.integers(1, 4))
    whole = draw(st.integers(0, 10 ** 6))
    part = draw(st.integers(0, 10 ** decimals - 1))
    offset = Fraction(whole) + Fraction(part, 10 ** decimals)
    power = draw(st.integers(-2, 2))
    return decimals, offset, power


def small(n_min, n_max, lo=-12, hi=12):
    return st.lists(st.integers(lo, hi), min_size=n_min, max_size=n_max)


def versions(ks, decimals, offset, power):
    """The base values, shifted by the offset, and scaled by 10^power (floats of exact
    decimals), and the base as exact fractions."""
    base = [Fraction(k, 10 ** decimals) for k in ks]
    scale = Fraction(10) ** power
    as_float = lambda vs: np.array([float(v) for v in vs])
    return base, [as_float(base), as_float([v + offset for v in base]),
                  as_float([v * scale for v in base])]


def same(values, rel=1e-12):
    first = values[0]
    return all(v == pytest.approx(first, rel=rel, abs=1e-15) for v in values[1:])


def exact_algorithms(cands):
    return [c.algorithm for c in cands if c.exact and c.feasible and c.seconds < 2.0]


# ---------------------------------------------------------------- two samples

@BOUNDED
@given(small(1, 4), small(1, 4), transforms(), st.sampled_from(ALTERNATIVES))
def test_two_sample_p_keeps_every_invariance(kx, ky, tr, alternative):
    decimals, offset, power = tr
    bx, xs = versions(kx, decimals, offset, power)
    by, ys = versions(ky, decimals, offset, power)
    for family in ("means", "ranks", "medians", "normal-scores"):
        want = float(brute.two_sample_p(family, bx, by, alternative))
        cands = twosample.candidates(family, xs[0], ys[0], DRAWS)
        for algorithm in exact_algorithms(cands) + ["monte-carlo"]:
            ps, swapped = [], []
            for x, y in zip(xs, ys):
                out, iv = twosample.run(family, x, y, alternative, algorithm, 0.9, DRAWS, SEED)
                back, iv2 = twosample.run(family, y[::-1], x[::-1], FLIP[alternative],
                                          algorithm, 0.9, DRAWS, SEED)
                ps.append(out.p_value)
                if algorithm != "monte-carlo":
                    swapped.append(back.p_value)
                if family == "means" and algorithm != "monte-carlo":
                    assert iv2 == pytest.approx((-iv[1], -iv[0]), rel=1e-9, abs=1e-9)
            assert same(ps), (family, algorithm, ps)
            if algorithm != "monte-carlo":
                assert ps[0] == pytest.approx(want, rel=1e-9), (family, algorithm)
                assert same(ps + swapped), (family, algorithm, swapped)


# ---------------------------------------------------------------- paired and one sample

@BOUNDED
@given(small(1, 6, -9, 9), small(1, 6, -9, 9), transforms(), st.sampled_from(ALTERNATIVES))
def test_signed_rank_on_paired_and_one_sample_data_with_offsets(ka, kb, tr, alternative):
    """The signed-rank p (and the sign-flip and sign tests') of data with 1-3 decimals and
    offsets up to 1e6, through the language, against brute force on the exact differences."""
    decimals, offset, _ = tr
    decimals = min(decimals, 3)
    n = min(len(ka), len(kb))
    a = [Fraction(k, 10 ** decimals) + offset for k in ka[:n]]
    b = [Fraction(k, 10 ** decimals) + offset for k in kb[:n]]
    d = [p - q for p, q in zip(a, b)]
    first, second = _inline(a), _inline(b)
    for family in ("ranks", "means", "signs"):
        want = float(brute.one_sample_p(family, d, alternative))
        paired = permq.run(f"compare {first} vs {second} paired using {family} "
                           f"alternative {alternative}")[0]
        assert paired.outcome.p_value == pytest.approx(want, rel=1e-9), (family, d)
        value = b[0]
        one = permq.run(f"compare {first} vs {_text(value)} using {family} "
                        f"alternative {alternative}")[0]
        want_one = float(brute.one_sample_p(family, [p - value for p in a], alternative))
        assert one.outcome.p_value == pytest.approx(want_one, rel=1e-9), (family, a, value)


def _text(v: Fraction) -> str:
    return repr(float(v))


def _inline(vs) -> str:
    return "[" + ", ".join(_text(v) for v in vs) + "]"


@BOUNDED
@given(small(1, 7, -9, 9), transforms(), st.sampled_from(ALTERNATIVES))
def test_sign_flip_engine_keeps_scale_and_sign_changes(kd, tr, alternative):
    decimals, _, power = tr
    base, (d0, _, dk) = versions(kd, decimals, Fraction(0), power)
    for family in ("means", "ranks", "signs"):
        want = float(brute.one_sample_p(family, base, alternative))
        for algorithm in ("dp-integer", "enumeration", "monte-carlo"):
            ps = [onesample.run(family, d, alternative, algorithm, 0.9, DRAWS, SEED)[0].p_value
                  for d in (d0, dk)]
            ps.append(onesample.run(family, -d0[::-1], FLIP[alternative], algorithm, 0.9, DRAWS,
                                    SEED)[0].p_value)
            if algorithm == "monte-carlo":
                assert same(ps[:2])
            else:
                assert same(ps) and ps[0] == pytest.approx(want, rel=1e-9), (family, algorithm)


# ---------------------------------------------------------------- three groups

sizes3 = st.lists(st.integers(2, 3), min_size=3, max_size=3)


@BOUNDED
@given(sizes3, st.data(), transforms(), st.permutations([0, 1, 2]))
def test_k_sample_p_keeps_every_invariance(sizes, data, tr, relabel):
    decimals, offset, power = tr
    ks = data.draw(small(sum(sizes), sum(sizes)))
    groups = np.repeat(np.arange(3), sizes)
    base, vs = versions(ks, decimals, offset, power)
    order = np.random.default_rng(len(ks)).permutation(len(ks))
    for key in ("means", "ranks", "medians", "normal-scores"):
        fam = ksample.FAMILIES[key]
        want = None if key == "normal-scores" else float(brute.k_sample_p(key, base, groups))
        for algorithm in exact_algorithms(fam.candidates(vs[0], groups, DRAWS)) + ["monte-carlo"]:
            ps = [fam.run(v, groups, "two-sided", algorithm, DRAWS, SEED).p_value for v in vs]
            ps.append(fam.run(vs[1][order], np.array(relabel)[groups][order], "two-sided",
                              algorithm, DRAWS, SEED).p_value)
            if algorithm == "monte-carlo":
                assert same(ps[:3]), (key, ps)
                continue
            assert same(ps), (key, algorithm, ps)
            if want is not None:
                assert ps[0] == pytest.approx(want, rel=1e-9), (key, algorithm)


sizes4 = st.lists(st.integers(2, 3), min_size=4, max_size=4).filter(lambda s: sum(s) <= 9)


@BOUNDED
@given(sizes4, st.data(), transforms(), st.permutations([0, 1, 2, 3]))
def test_k_sample_table_route_keeps_every_invariance(sizes, data, tr, relabel):
    from permq.engine.tables import halves

    decimals, offset, power = tr
    ks = data.draw(small(sum(sizes), sum(sizes), lo=-2, hi=1))      # at most 4 categories
    groups = np.repeat(np.arange(4), sizes)
    base, vs = versions(ks, decimals, offset, power)
    if len(set(ks)) < 2:
        return
    order = np.random.default_rng(len(ks)).permutation(len(ks))
    for key in ("means", "ranks"):
        fam = ksample.FAMILIES[key]
        want = float(brute.k_sample_p(key, base, groups))
        ps = [fam.run(v, groups, "two-sided", halves.HALVES).p_value for v in vs]
        ps.append(fam.run(vs[1][order], np.array(relabel)[groups][order], "two-sided",
                          halves.HALVES).p_value)
        assert same(ps), (key, ps)
        assert ps[0] == pytest.approx(want, rel=1e-9), key


@BOUNDED
@given(sizes3, st.data(), transforms(), st.sampled_from(ALTERNATIVES))
def test_ordered_p_keeps_every_invariance(sizes, data, tr, alternative):
    decimals, offset, power = tr
    ks = data.draw(small(sum(sizes), sum(sizes)))
    groups = np.repeat(np.arange(3), sizes)
    base, vs = versions(ks, decimals, offset, power)
    doses = [Fraction(0), Fraction(1, 10 ** decimals) + offset, Fraction(3, 10 ** decimals) + offset]
    dose_f = np.array([float(v) for v in doses])
    reverse = 2 - groups
    want_jt = float(brute.jonckheere_p(base, groups, alternative))
    want_trend = float(brute.trend_p(base, groups, doses, alternative))
    jt = ordered.JONCKHEERE_TERPSTRA
    for algorithm in ("dp-counts", "monte-carlo"):
        ps = [jt.run(v, groups, alternative, algorithm, DRAWS, SEED).p_value for v in vs]
        ps.append(jt.run(vs[1], reverse, FLIP[alternative], algorithm, DRAWS, SEED).p_value)
        if algorithm == "monte-carlo":
            assert same(ps[:3])
        else:
            assert same(ps) and ps[0] == pytest.approx(want_jt, rel=1e-9)
    trend = ordered.LINEAR_TREND
    for algorithm in ("dp-counts", "enumeration", "monte-carlo"):
        ps = [trend.run(v, groups, alternative, algorithm, DRAWS, SEED, scores=dose_f).p_value
              for v in vs]
        ps.append(trend.run(vs[1], groups, alternative, algorithm, DRAWS, SEED,
                            scores=dose_f * 10.0 ** power).p_value)
        if algorithm == "monte-carlo":
            assert same(ps[:3])
        else:
            assert same(ps) and ps[0] == pytest.approx(want_trend, rel=1e-9), algorithm
    lo, hi = ordered.slope_estimate(vs[0], groups, dose_f, 0.9, alternative).interval
    lo1, hi1 = ordered.slope_estimate(vs[1], groups, dose_f, 0.9, alternative).interval
    assert (lo1, hi1) == pytest.approx((lo, hi), rel=1e-7, abs=1e-9)


# ---------------------------------------------------------------- blocks

@BOUNDED
@given(st.lists(st.integers(2, 3), min_size=2, max_size=3), st.data(), transforms(),
       st.sampled_from(ALTERNATIVES))
def test_stratified_p_keeps_every_invariance(block_sizes, data, tr, alternative):
    decimals, offset, power = tr
    n = sum(block_sizes)
    ks = data.draw(small(n, n))
    blk = np.repeat(np.arange(len(block_sizes)), block_sizes)
    groups = np.concatenate([[0, 1] + [data.draw(st.integers(0, 1))] * (s - 2)
                             for s in block_sizes]).astype(np.int64)
    base, vs = versions(ks, decimals, offset, power)
    for family, test in (("ranks", "stratified-ranks"), ("means", "stratified-means")):
        want = float(brute.stratified_p(family, base, list(groups), list(blk), 0, alternative))
        for algorithm in exact_algorithms(blocks.candidates(test, vs[0], groups, blk, DRAWS)):
            ps = [blocks.run(test, v, groups, blk, alternative, algorithm).p_value for v in vs]
            ps.append(blocks.run(test, vs[1], 1 - groups, blk[::-1].copy()[::-1] * 0 +
                                 (len(block_sizes) - 1 - blk), FLIP[alternative],
                                 algorithm).p_value)
            assert same(ps) and ps[0] == pytest.approx(want, rel=1e-9), (test, algorithm, ps)
        mc = [blocks.run(test, v, groups, blk, alternative, "monte-carlo", DRAWS, SEED).p_value
              for v in vs]
        assert same(mc)


@BOUNDED
@given(st.integers(2, 3), st.integers(2, 3), st.data(), transforms(),
       st.sampled_from(ALTERNATIVES))
def test_complete_blocks_p_keeps_every_invariance(b, k, data, tr, alternative):
    decimals, offset, power = tr
    ks = data.draw(small(b * k, b * k))
    groups = np.tile(np.arange(k), b)
    blk = np.repeat(np.arange(b), k)
    base, vs = versions(ks, decimals, offset, power)
    block_shift = np.repeat(np.arange(b) * 1000.0, k)            # a different offset per block
    for test in ("friedman", "within-block-f", "page"):
        alt = alternative if test == "page" else "two-sided"
        want = float(brute.complete_blocks_p(test, base, list(groups), list(blk), alt))
        for algorithm in exact_algorithms(blocks.candidates(test, vs[0], groups, blk, DRAWS)):
            ps = [blocks.run(test, v, groups, blk, alt, algorithm).p_value for v in vs]
            ps.append(blocks.run(test, vs[1] + block_shift, groups, blk, alt, algorithm).p_value)
            if test == "page":     # the order reversed: a rise becomes a fall
                ps.append(blocks.run(test, vs[1], k - 1 - groups, blk, FLIP[alt],
                                     algorithm).p_value)
            else:                  # treatments relabelled
                ps.append(blocks.run(test, vs[1], (groups + 1) % k, blk, alt, algorithm).p_value)
            assert same(ps) and ps[0] == pytest.approx(want, rel=1e-9), (test, algorithm, ps)
        mc = [blocks.run(test, v, groups, blk, alt, "monte-carlo", DRAWS, SEED).p_value
              for v in vs]
        assert same(mc), (test, mc)


# ---------------------------------------------------------------- association

@BOUNDED
@given(st.integers(4, 6), st.data(), transforms(), st.sampled_from(ALTERNATIVES))
def test_association_p_keeps_every_invariance(n, data, tr, alternative):
    decimals, offset, power = tr
    ky = data.draw(small(n, n))
    kx = data.draw(small(n, n))
    if len(set(ky)) < 2 or len(set(kx)) < 2:
        return
    by, ys = versions(ky, decimals, offset, power)
    bx, xs = versions(kx, decimals, offset, power)
    order = np.random.default_rng(n).permutation(n)
    for statistic in ("pearson", "spearman", "kendall", "slope"):
        want = float(brute.association_p(statistic, by, bx, alternative))
        cands = association.candidates(statistic, ys[0], xs[0], DRAWS)
        for algorithm in exact_algorithms(cands):
            ps = [association.run(statistic, y, x, alternative, algorithm).p_value
                  for y, x in zip(ys, xs)]
            ps.append(association.run(statistic, ys[1][order], xs[2][order], alternative,
                                      algorithm).p_value)
            ps.append(association.run(statistic, -ys[1], xs[1], FLIP[alternative],
                                      algorithm).p_value)
            assert same(ps, rel=1e-9) and ps[0] == pytest.approx(want, rel=1e-9), \
                (statistic, algorithm, ps, want)
    if alternative == "two-sided":
        est = [association.estimate("slope", y, x, "two-sided", "enumeration", 0.9).interval
               for y, x in zip(ys[:2], xs[:2])]
        assert est[1] == pytest.approx(est[0], rel=1e-7, abs=1e-9)


# ---------------------------------------------------------------- tables and many tests

@settings(max_examples=15, deadline=None, derandomize=True,
          phases=[Phase.explicit, Phase.reuse, Phase.generate])
@given(st.lists(st.lists(st.integers(0, 4), min_size=3, max_size=3), min_size=2, max_size=3),
       st.permutations([0, 1, 2]), transforms())
def test_table_p_keeps_relabelling_transposing_and_score_offsets(cells, cols, tr):
    t = np.array(cells)
    if (t.sum(axis=0) == 0).any() or (t.sum(axis=1) == 0).any():
        return
    for statistic in ("fisher", "chi-square", "likelihood-ratio"):
        p = rxc.run(t, statistic).p_value
        assert rxc.run(t[::-1][:, cols], statistic).p_value == pytest.approx(p, rel=1e-9)
        assert rxc.run(t.T, statistic).p_value == pytest.approx(p, rel=1e-9)
    decimals, offset, power = tr
    u = np.arange(t.shape[0], dtype=float)
    v = np.array([0.0, 1.0, 3.0])
    for alternative in ALTERNATIVES:
        p = rxc.run(t, "trend", alternative, row_scores=u, col_scores=v).p_value
        shifted = rxc.run(t, "trend", alternative, row_scores=u + float(offset),
                          col_scores=v * 10.0 ** power + float(offset)).p_value
        flipped = rxc.run(t[::-1], "trend", FLIP[alternative], row_scores=u,
                          col_scores=v).p_value
        assert shifted == pytest.approx(p, rel=1e-9) and flipped == pytest.approx(p, rel=1e-9)


def test_many_responses_keep_their_p_under_offsets_and_powers_of_ten():
    # three responses of 6 + 6 units: the second is the first plus 123456.78, the third the
    # first times 1000; every exact p is the one-response p, and brute force (924 splits)
    rng = np.random.default_rng(21)
    first = np.round(rng.normal(5, 1, 12), 2)
    frame = pd.DataFrame({"g": ["a"] * 6 + ["b"] * 6, "y1": first,
                          "y2": np.array([float(Fraction(repr(float(v))) + Fraction("123456.78"))
                                          for v in first]),
                          "y3": np.array([float(Fraction(repr(float(v))) * 1000) for v in first])})
    want = float(brute.two_sample_p("means", list(first[:6]), list(first[6:]), "two-sided"))
    for family in ("means", "ranks"):
        out = permq.run(f"compare every numeric by g using {family} adjust none",
                        tables={"t": frame})[0]
        p = [row.p_value for row in out.rows]
        assert same(p), p
        if family == "means":
            assert p[0] == pytest.approx(want, rel=1e-9)


def test_robustness_check_keeps_its_numbers_under_an_offset_and_a_power_of_ten():
    # the simulated data sets live on the design's standardised scale: the rejection rates of
    # both tests do not move when the data are shifted by 100000 or multiplied by 100
    x = [10.1, 10.4, 9.8, 10.9, 11.2]
    y = [9.1, 9.9, 9.5, 10.2, 9.0]
    shift = lambda vs: _inline([Fraction(repr(v)) + 100000 for v in vs])
    times = lambda vs: _inline([Fraction(repr(v)) * 100 for v in vs])
    rows = []
    for a, b in ((_inline([Fraction(repr(v)) for v in x]), _inline([Fraction(repr(v)) for v in y])),
                 (shift(x), shift(y)), (times(x), times(y))):
        out = permq.run(f"robustness compare {a} vs {b} datasets 200 seed 3")[0]
        rows.append([(law["law"], law["permutation"]["rejection_rate"],
                      law["permutation"]["power"], law["normal_theory"]["rejection_rate"])
                     for law in out.to_dict()["laws"]])
    assert rows[0] == rows[1] == rows[2]


# ---------------------------------------------------------------- censored times

@BOUNDED
@given(st.integers(6, 9), st.data(), transforms(), st.sampled_from(ALTERNATIVES))
def test_censored_times_keep_every_invariance(n, data, tr, alternative):
    """Log-rank scores depend on the order of the times only: offsets, powers of ten and
    reordering keep every p; swapping the groups flips the side. Two groups, within strata,
    and three groups (the upper tail, which has no side)."""
    from permq.engine import events, events_groups, events_strata
    from test_events_layouts import brute_groups_p, brute_strata_p

    decimals, offset, power = tr
    ks = data.draw(small(n, n, 0, 8))
    ev = np.array(data.draw(st.lists(st.integers(0, 1), min_size=n, max_size=n)))
    ev[0] = 1
    base, vs = versions(ks, decimals, offset, power)
    groups = (np.arange(n) % 2).astype(np.int64)
    strata = (np.arange(n) % 3 == 0).astype(np.int64)
    order = np.arange(n)[::-1]
    for kind in ("log-rank", "gehan"):
        want = float(brute_strata_p(kind, base, ev, groups, strata, alternative))
        for algorithm in exact_algorithms(events_strata.candidates(kind, vs[0], ev, groups,
                                                                   strata, DRAWS)):
            ps = [events_strata.run(kind, v, ev, groups, strata, alternative, algorithm).p_value
                  for v in vs]
            ps.append(events_strata.run(kind, vs[1][order], ev[order], 1 - groups[order],
                                        strata[order], FLIP[alternative], algorithm).p_value)
            assert same(ps) and ps[0] == pytest.approx(want, rel=1e-9), (kind, algorithm, ps)
        data_of = [events.EventTimes(tuple(v[groups == 0]), tuple(ev[groups == 0]),
                                     tuple(v[groups == 1]), tuple(ev[groups == 1])) for v in vs]
        two = [events.run(kind, d, alternative, "enumeration", 0.95).p_value for d in data_of]
        assert same(two)
        g3 = (np.arange(n) % 3).astype(np.int64)
        want3, _ = brute_groups_p(kind, base, ev, g3)
        for algorithm in exact_algorithms(events_groups.candidates(kind, vs[0], ev, g3, DRAWS)):
            ps = [events_groups.run(kind, v[order], ev[order], (2 - g3)[order], "two-sided",
                                    algorithm).p_value for v in vs]
            assert same(ps) and ps[0] == pytest.approx(float(want3), rel=1e-9), (kind, algorithm)
