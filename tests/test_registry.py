"""The family registry: every declared family has what the pipeline, help and completion need,
and the grammar, completion and help read their words from it."""
from __future__ import annotations

import pytest

import permq
from permq.families import registry
from permq.frontends.shell import vocabulary as vocab
from permq.frontends.shell.notes import family_note
from permq.help import help_text

FAMILIES = registry.families()


@pytest.mark.parametrize("family", FAMILIES, ids=lambda f: f"{f.keyword}:{'/'.join(f.kinds)}")
def test_every_family_declares_its_parts(family):
    assert family.title and family.normal, "a published name and a normal-theory counterpart"
    assert callable(family.plan) and callable(family.execute)
    assert family.kinds and all(k in registry.kinds() for k in family.kinds)
    assert family.robustness is not None or family.no_robustness, \
        "a robustness check, or the reason there is none"
    if family.selectable:
        assert family.keyword in vocab.value_sets()["FAMILY"], "the grammar takes its word"
        assert family_note(family.keyword) != "test family", "completion describes it"
        assert family.title in help_text(family.keyword), "help names it"
        assert family.keyword in help_text("families")


def test_every_kind_has_one_default_and_the_binder_uses_it():
    for kind in {k for f in FAMILIES for k in f.kinds}:
        assert sum(kind in f.default_in for f in FAMILIES) == 1, kind
    r = permq.run("compare [1, 2, 3] vs [4, 5, 6, 7]")[0]
    assert r.outcome.statistic_name == "difference in means"


def test_the_grammar_offers_exactly_the_registry_words():
    assert set(vocab.value_sets()["FAMILY"]) == set(registry.keywords())


def test_a_word_of_another_design_says_where_it_applies():
    f = permq.run("count [[3, 1, 2], [1, 4, 2]] using trend")[0]
    assert isinstance(f, permq.Failure)
    assert f.message == "'trend' is not a test family for a table"
    assert "add 'ordered'" in f.hint


def test_a_family_option_is_refused_with_the_family_that_takes_it():
    tables = {"t": __import__("pandas").DataFrame({"y": [1.0, 2, 4, 3, 5, 7],
                                                   "x": [1.0, 2, 3, 4, 5, 6],
                                                   "z": [0.0, 1, 0, 1, 0, 1]})}
    f = permq.run("relate y to x using pearson adjusting for z", tables=tables)[0]
    assert isinstance(f, permq.Failure)
    assert f.message == "'adjusting for' goes with slope" and f.hint == "add: using slope"
