"""Every registered family declares what the rest of the product reads from it: a title, and
for its word a summary (help, completion notes; one declaration of the word may give it), a normal-theory counterpart, a robustness form or the reason
it has none; every selectable word is offered after `using` for its statement and has a help
page; every design kind has exactly one default."""
import pytest

from permq.families import registry
from permq.frontends.shell.completion import suggest
from permq.help import help_text
from permq.bind.common import Catalog

FAMILIES = registry.families()


@pytest.mark.parametrize("family", FAMILIES, ids=lambda f: f"{f.keyword}:{f.kinds[0]}")
def test_each_family_declares_its_text_counterpart_and_robustness(family):
    assert family.title.strip()
    assert any(f.summary.strip() for f in FAMILIES if f.keyword == family.keyword)
    assert family.normal.strip()
    assert family.robustness or family.no_robustness.strip()
    page = help_text(family.keyword) if family.selectable else ""
    if family.selectable:
        assert family.title in page


VERB_PREFIX = {"compare": "compare mass by recipe using ", "relate": "relate mass to light using ",
               "count": "count recipe by bench using "}


def test_selectable_words_are_offered_after_using_for_their_verb():
    catalog = Catalog()
    for verb, prefix in VERB_PREFIX.items():
        offered = {w for w, _ in suggest(prefix, catalog)}
        assert set(registry.for_verb(verb)) <= offered, verb


def test_every_kind_with_families_has_one_default():
    for name in registry.kinds():
        if registry.for_kind(name):
            assert registry.default(name).keyword
