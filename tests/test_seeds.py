"""The Monte Carlo seed: decided once per statement by the pipeline, derived from the
statement's text by default (so a query file gives the same numbers on every run), fresh on
request, printed, pinned by `save`."""
import hashlib
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

import permq
from permq.engine.montecarlo import sampling
from permq.plan import seeds
from permq.render import text as render_text

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo"
MC = 'relate mass to light using slope in trays sampled 2000'


def session():
    return permq.Session(tables={"trays": pd.read_csv(DEMO / "trays.csv"),
                                 "plots": pd.read_csv(DEMO / "plots.csv")})


def one(statement, s=None):
    [r] = (s or session()).run(statement)
    assert not isinstance(r, permq.Failure), r.message
    return r


def test_the_default_seed_is_the_statements_own_and_repeats_across_sessions():
    a, b = one(MC), one(MC)
    assert a.outcome.seed == b.outcome.seed == seeds.derived_seed(MC)
    assert a.outcome.p_value == b.outcome.p_value
    assert a.estimate.interval == b.estimate.interval
    assert a.seed_source == "statement"
    assert f"seed {a.outcome.seed} (from the statement's text)" in render_text.render_one(a)


def test_spacing_comments_and_continuations_do_not_change_the_seed():
    variants = [MC, "relate   mass to light\tusing slope in trays sampled 2000   # a note",
                "relate mass to light \\\nusing slope in trays sampled 2000",
                "explain " + MC]
    assert len({seeds.derived_seed(v) for v in variants}) == 1
    assert seeds.canonical("count [[9,1],[3, 7]]") == seeds.canonical("count [[9, 1], [3,7]]")
    # the words and numbers as written do count
    others = [MC + " alternative higher", MC.replace("2000", "2001"),
              'compare mass by recipe levels "A", "B"', 'compare mass by recipe levels "A ", "B"']
    assert len({seeds.derived_seed(v) for v in others + [MC]}) == len(others) + 1


def test_the_derived_seed_is_the_sha256_of_the_canonical_text():
    """Stable across machines and Python versions (hash() is salted per process; SHA-256 is
    not). Reference: hashlib's SHA-256 of the canonical text, first 8 bytes big-endian."""
    text = "compare  mass by recipe   # why"
    digest = hashlib.sha256(b"compare mass by recipe").digest()
    assert seeds.derived_seed(text) == int.from_bytes(digest[:8], "big") % (2 ** 31 - 1) + 1
    assert 1 <= seeds.derived_seed(text) < 2 ** 31


def test_a_query_file_run_twice_gives_the_same_numbers(tmp_path):
    plan = tmp_path / "plan.pq"
    plan.write_text("count [[3, 4, 5], [6, 1, 9]] sampled 1000   # Monte Carlo, no seed given\n")
    run = [sys.executable, "-m", "permq", "run", str(plan), "--format", "json"]
    first, second = (subprocess.run(run, capture_output=True, text=True, check=True).stdout
                     for _ in range(2))
    assert first == second and '"seed"' in first and '"monte-carlo"' in first


def test_seed_fresh_draws_a_new_seed_each_run_and_says_so():
    a, b = one(MC + " seed fresh"), one(MC + " seed fresh")
    assert a.seed_source == b.seed_source == "fresh"
    assert a.outcome.seed != b.outcome.seed       # 1 chance in 2^31 of a false alarm
    assert "(fresh for this run)" in render_text.render_one(a)


def test_a_given_seed_wins_and_is_printed_plain():
    r = one(MC + " seed 7")
    assert r.outcome.seed == 7 and r.seed_source == "given"
    shown = render_text.render_one(r)
    assert "seed 7" in shown and "seed 7 (" not in shown


def test_set_seed_fresh_statement_and_a_number():
    s = session()
    s.run("set seed fresh")
    assert one(MC, s).seed_source == "fresh"
    assert "seed fresh each run" in s.run("show settings")[0].text
    s.run("set seed 11")
    assert one(MC, s).outcome.seed == 11
    assert one(MC + " seed 5", s).outcome.seed == 5      # the statement's own wins
    s.run("set seed statement")
    r = one(MC, s)
    assert r.outcome.seed == seeds.derived_seed(MC) and r.seed_source == "statement"
    assert "seed from each statement" in s.run("show settings")[0].text
    [bad] = s.run("set seed soon")
    assert isinstance(bad, permq.Failure) and "whole number" in bad.message
    assert "fresh" in bad.hint


def test_explain_shows_the_seed_the_run_uses():
    note = one("explain " + MC)
    assert f"seed {seeds.derived_seed(MC)}" in note.text


def test_robustness_uses_the_statements_seed():
    st = 'robustness compare mass by recipe levels "A", "B" in trays datasets 200'
    a, b = one(st), one(st)
    assert a.seed == b.seed == seeds.derived_seed(st)
    assert a.to_dict()["laws"] == b.to_dict()["laws"]


def test_save_pins_the_seed_before_any_comment_and_the_replay_matches(tmp_path):
    s = session()
    r = one(MC + " seed fresh  # from the lab book", s)
    s.run(f'save "{tmp_path / "s.pq"}"')
    saved = (tmp_path / "s.pq").read_text().splitlines()[-1]
    assert saved == f"{MC} seed {r.outcome.seed}"
    again = one(saved)
    assert again.outcome.p_value == r.outcome.p_value and again.outcome.seed == r.outcome.seed


def test_pinned_keeps_quoted_text_as_written():
    st = 'compare mass by recipe levels "A  x", "B" # note'
    assert seeds.pinned(st, 3) == 'compare mass by recipe levels "A  x", "B" seed 3'
    assert seeds.pinned(st + "\n", 3).endswith("seed 3")
    assert seeds.pinned("compare x by g seed 4 # c", 9) == "compare x by g seed 4"


def test_engines_draw_no_seed_of_their_own():
    with pytest.raises(ValueError, match="needs a seed"):
        next(sampling.blocks(None, 10))
    assert [size for _, size, _ in sampling.blocks(3, 10)] == [10]


def test_a_column_named_fresh_still_reads_as_a_column():
    frame = pd.DataFrame({"fresh": [1.0, 2.0, 3.5, 4.0, 5.5, 6.0], "g": list("aaabbb")})
    r = one("compare fresh by g in t", permq.Session(tables={"t": frame}))
    assert r.outcome.method == "exact"
