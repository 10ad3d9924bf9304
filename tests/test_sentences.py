"""Reporting sentences: every result kind names its method and carries the result's numbers."""
from __future__ import annotations

import io
import sys

import pytest

from kinds import KINDS, kinds
from permq.frontends.cli import main
from permq.render import numbers as fmt
from permq.render.methods import method_of
from permq.render.sentences import decimals_for, number, render, sentence

SINGLE = [k for k in KINDS if k not in ("robustness", "robustness counts", "several responses",
                                        "pairwise", "two factors", "failure",
                                        "many-to-one means", "many-to-one ranks",
                                        "lowest effective dose", "robustness many-to-one")]


@pytest.mark.parametrize("kind", SINGLE)
def test_a_result_sentence_has_the_method_and_the_numbers(kind):
    out = kinds()[kind]
    r = out.to_dict()
    text = out.sentence()
    assert text == sentence(r) and text.endswith(".")
    assert method_of(r).name in text
    assert f"p = {fmt.p(r['p_value'])}" in text
    if r["method"] == "exact":
        n = r["arrangements"] - 1 if r["statistic"]["name"].startswith(
            ("count of successes", "discordant")) else r["arrangements"]
        assert (fmt.count(n) in text) or (f"{n:,}" in text)
    else:
        assert f"{r['draws']:,} random arrangements" in text and f"seed {r['seed']}" in text
        lo, hi = r["p_interval"]
        assert f"99% interval for p {fmt.p(lo)} to {fmt.p(hi)}" in text
    if r["normal_theory"]:
        assert f"{r['normal_theory']['test']} gives p = {fmt.p(r['normal_theory']['p_value'])}" in text
    est = r.get("estimate")
    if est:
        d = decimals_for(est["value"])
        assert f" {number(est['value'], d)} (" in text
        if est["interval"] and all(isinstance(v, float) for v in est["interval"]):
            lo, hi = est["interval"]
            assert f"interval {number(lo, d)} to {number(hi, d)}" in text
        elif est["interval"] is None and (r.get("normal_interval") or {}).get("interval"):
            lo, hi = r["normal_interval"]["interval"]
            assert "normal-theory" in text and "no exact interval" in text
        elif est["interval"] is None:
            assert "no interval for this estimate" in text
    for s in r.get("effect_sizes", []):
        if s["value"] is not None:
            assert f"= {number(s['value'], 2 if abs(s['value']) < 10 else decimals_for(s['value']))}" in text


def test_examples_read_as_a_report_writes_them():
    k = kinds()
    assert k["two-sample means"].sentence() == (
        "difference in means A - B 1.60 (95% exact interval 0.70 to 2.55); permutation test of "
        "the difference in means (Pitman): exact two-sided p = 0.0065 over 924 arrangements; "
        "Welch t (unequal variances) gives p = 0.0037; standardised difference d = 2.20 (95% "
        "interval 0.96 to 3.51).")
    assert k["table 2x2"].sentence().startswith(
        "odds ratio of 'better' in 'treated' against 'control' 17.3 (95% exact interval 1.4 to "
        "1047.8); Fisher's exact test: exact two-sided p = 0.0198 over 9 tables with the "
        "observed margins")
    assert "exact binomial test: exact two-sided p = 0.2632 from the binomial law of the 20 " \
           "trials" in k["proportion"].sentence()
    assert "McNemar's exact test" in k["paired counts"].sentence()
    assert "(95% exact lower bound" in sentence(
        dict(k["two-sample ranks"].to_dict(), estimate=dict(
            k["two-sample ranks"].to_dict()["estimate"], interval=[0.6, "inf"])))


def test_several_tests_robustness_and_failures_have_sentences():
    k = kinds()
    many = k["several responses"].to_dict()
    text = k["several responses"].sentence()
    assert f"{many['tested']} responses tested, {many['adjustment']} adjustment" in text
    for row in many["rows"]:
        assert f"{row['name']} p = {fmt.p(row['p_value'])} (adjusted {fmt.p(row['p_adjusted'])}" in text
    pw = k["pairwise"].to_dict()
    assert f"overall {pw['overall']['test']} p = {fmt.p(pw['overall']['p_value'])}" in \
        k["pairwise"].sentence()
    rob = k["robustness"].to_dict()
    text = k["robustness"].sentence()
    assert text.startswith("Robustness of the permutation test of the difference in means")
    assert f"{rob['datasets']} data sets a law at 5% (seed 5)" in text
    for law in rob["laws"]:
        assert law["name"] in text or "under all" in text
    assert "Robustness of Fisher's exact test" in k["robustness counts"].sentence()
    assert k["failure"].sentence().startswith("'compare mass by recipy in trays' did not run: "
                                              "no column 'recipy'")


def test_many_rows_are_cut_to_the_first_five():
    r = kinds()["several responses"].to_dict()
    rows = [dict(r["rows"][0], name=f"r{i}") for i in range(9)]
    assert sentence(dict(r, rows=rows)).endswith("; and 4 more.")


def test_format_sentences_gives_one_line_per_result(monkeypatch, capsys):
    monkeypatch.setattr(sys, "stdin", io.StringIO(
        "compare [1, 2, 3] vs [4, 5, 6]\nset seed 3\ncompare [1, 2] vs\ncount 3 of 9\n"))
    assert main(["run", "-", "--format", "sentences"]) == 1
    lines = capsys.readouterr().out.splitlines()
    assert len(lines) == 3
    assert "exact two-sided p = 0.1000 over 20 arrangements" in lines[0]
    assert lines[1].startswith("'compare [1, 2] vs' did not run")
    assert lines[2].startswith("proportion of successes")
    assert render([kinds()["two-sample means"]]) == kinds()["two-sample means"].sentence() + "\n"
