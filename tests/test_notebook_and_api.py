"""Results in notebooks and pipelines: str / repr / HTML, to_frame, the schema, the function API."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

import permq
from kinds import DEMO, KINDS, kinds, session_results
from permq.contract import schema, schema_text
from permq.frontends.cli import main
from permq.render.frame import record_of
from permq.render.jsonout import records


def test_every_result_kind_validates_against_the_shipped_schema(capsys):
    jsonschema = pytest.importorskip("jsonschema")
    validator = jsonschema.Draft202012Validator(schema())
    jsonschema.Draft202012Validator.check_schema(schema())
    recs = json.loads(json.dumps(records(list(kinds().values()))))
    for name, rec in zip(KINDS, recs):
        errors = [e.message for e in validator.iter_errors([rec])]
        assert not errors, (name, errors[:3])
    broken = dict(recs[0], p_value=1.5)
    assert list(validator.iter_errors([broken]))          # the schema can fail
    assert main(["schema"]) == 0
    assert json.loads(capsys.readouterr().out) == json.loads(schema_text())


def _without_nulls(d):
    if isinstance(d, dict):
        return {k: _without_nulls(v) for k, v in d.items() if v is not None and v != {}}
    return d


def test_to_frame_round_trips_the_json_fields():
    results = session_results()
    frame = results.to_frame()
    recs = results.records()
    assert len(frame) == sum(len(r.get("rows", r.get("terms", [0]))) for r in recs)
    for _, row in frame.iterrows():
        back = record_of(row.to_dict())
        rec = recs[row["record"]]
        if row["kind"] == "several":
            match = [x for x in rec["rows"] if x["name"] == back["row"]["name"]][0]
            assert _without_nulls(match) == _without_nulls(back.pop("row"))
            rec = {k: v for k, v in rec.items() if k != "rows"}
        if row["kind"] == "term":
            match = [x for x in rec["terms"] if x["term"] == back["term"]["term"]][0]
            assert _without_nulls(match) == _without_nulls(back.pop("term"))
            rec = {k: v for k, v in rec.items() if k != "terms"}
        assert _without_nulls(back) == _without_nulls(rec), rec["statement"]
    single = frame[frame.kind == "result"]
    assert (single["p_value"] > 0).all() and "statistic.value" in frame
    many = frame[frame.kind == "several"]
    assert set(many["row.name"]) >= {"mass", "light", "A - B"}
    assert many["p_adjusted"].notna().all()


def test_str_repr_and_html_of_results():
    r = kinds()["two-sample means"]
    assert str(r).startswith("── compare mass by recipe")
    assert "permutation (exact)" in str(r)
    assert len(repr(r)) < 200 and repr(r).startswith("<permq.Result two-sample:")
    html = r._repr_html_()
    assert "<table>" in html and "difference in means A - B" in html and "<svg" not in html
    pic = permq.run('compare [1.2, 2.5, 3.1, 4.8] vs [5.0, 6.2, 7.7] picture "x.svg"',
                    base_dir=DEMO)[0]
    assert "<svg" in pic._repr_html_()
    for name in ("several responses", "robustness", "failure"):
        out = kinds()[name]
        assert len(repr(out)) < 200 and out._repr_html_().startswith("<style>")
    assert "<svg" in kinds()["robustness"]._repr_html_()
    results = session_results()
    assert isinstance(results, list) and results._repr_html_().count('class="permq-result"') == \
        len(KINDS)
    assert len(results.sentences()) == len(KINDS)


def test_compare_with_arrays_gives_the_statement_result():
    a = np.array([4.1, 5.3, 4.8, 5.0])
    b = np.array([6.0, 5.9, 7.2, 6.6, 6.1])
    r = permq.compare(a, b, using="ranks", confidence=0.9)
    same = permq.run("compare [4.1, 5.3, 4.8, 5] vs [6, 5.9, 7.2, 6.6, 6.1] using ranks "
                     "confidence 90%")[0]
    assert r.statement == same.statement
    assert r.to_dict() == same.to_dict()
    # numpy scalars, lists and Series all give plain numbers in the statement
    r2 = permq.compare(list(a), pd.Series(b), using="ranks", confidence=90)
    assert r2.outcome.p_value == r.outcome.p_value
    one = permq.compare(a, np.float64(5.0))
    assert one.family == "one-sample" and one.statement == "compare [4.1, 5.3, 4.8, 5] vs 5"
    with_nan = permq.compare([1.0, 2.0, np.nan], [3.0, 4.0, 5.0])
    assert "dropped 1 missing value from the first sample" in with_nan.warnings
    k = permq.compare([1.0, 2.0], [3.0, 4.0], [5.0, 6.5])
    assert k.family == "k-sample"
    assert permq.compare([2.0, 3.1, 4.5], [1.0, 2.0, 4.0], paired=True).family == "paired"


def test_compare_relate_count_with_dataframes():
    trays = pd.read_csv(DEMO / "trays.csv")
    plots = pd.read_csv(DEMO / "plots.csv")
    r = permq.compare(trays, "mass", by="recipe", levels=["A", "B"])
    assert r.statement == 'compare mass by recipe levels "A", "B" in data'
    assert r.outcome.p_value == kinds()["two-sample means"].outcome.p_value
    many = permq.compare(trays, ["mass", "light"], by="recipe", levels=["A", "B"])
    assert isinstance(many, permq.ManyResult) and many.tested == 2
    grouped = permq.compare(trays.mass, by=trays.recipe)
    assert grouped.family == "k-sample"
    kt = permq.relate(trays, "mass", "light", using="kendall")
    assert kt.outcome.p_value == kinds()["association kendall"].outcome.p_value
    arrays = permq.relate(trays.dropna().mass, trays.dropna().light)
    assert arrays.statement == "relate mass to light in data"
    t = permq.count(plots, "sprouted", by="dose", levels=["40", "0"])
    assert t.outcome.p_value == kinds()["table from columns"].outcome.p_value
    inline = permq.count([[9, 1], [3, 7]], rows=["treated", "control"], columns=["better", "same"])
    assert inline.statement == kinds()["table 2x2"].statement
    crosstab = permq.count(pd.crosstab(plots.sprouted, plots.dose))
    assert crosstab.to_dict()["table"]["columns"] == ["0", "10", "20", "40"]
    assert permq.count(7, of=20, vs=0.5).outcome.p_value == kinds()["proportion"].outcome.p_value
    assert permq.count(successes=7, trials=20).family == "table"
    labels = permq.count(list(plots.sprouted), by=list(plots.dose))
    assert labels.outcome.p_value == pytest.approx(
        permq.run('load "plots.csv"\ncount sprouted by dose', base_dir=DEMO)[-1].outcome.p_value)


def test_tables_given_as_dicts_and_the_errors_in_words():
    res = permq.run("compare x by g", tables={"t": {"x": [1.0, 2, 3, 4, 5, 6], "g": list("aaabbb")}})
    assert res[0].outcome.p_value == pytest.approx(2 / 20)
    with pytest.raises(TypeError, match=r"tables\['t'\] is a list; give a pandas DataFrame"):
        permq.run("compare x by g", tables={"t": [1, 2]})
    with pytest.raises(TypeError, match="all of the same length"):
        permq.run("compare x by g", tables={"t": {"x": [1, 2], "g": ["a"]}})
    with pytest.raises(permq.StatementFailed, match="did you mean 'mass'") as caught:
        permq.compare(pd.read_csv(DEMO / "trays.csv"), "mas", by="recipe")
    assert caught.value.failure.column == 9
    with pytest.raises(TypeError, match="unknown option"):
        permq.compare([1.0, 2.0], [3.0, 4.0], usign="ranks")
    with pytest.raises(ValueError, match="not a value"):
        permq.compare([1.0, 2.0], [3.0, np.inf])
    text = "compare [" + ", ".join(repr(np.float64(v)) for v in (1.0, 2.0)) + "] vs [3, 4]"
    failure = permq.run(text)[0]
    assert isinstance(failure, permq.Failure) and "permq.compare(a, b)" in failure.hint
