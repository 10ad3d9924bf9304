"""The machine-readable output is a contract (design.md): `permq run FILE --format json`."""
import csv
import io
import json
import os
import subprocess
import sys

import pytest

import permq
from conftest import ROOT
from permq.frontends.cli import main
from permq.render import render

SCRIPT = """load "plots.csv" as plots
compare yield by variety levels "A", "B"
compare yield by variety levels "A", "B" using ranks alternative higher
compare yield by varety
compare after vs before paired using signs
compare yield vs 10 using ranks confidence 90%
compare [4.1, 5.3, 4.8, 5.0] vs [6.0, 5.9, 7.2, 6.6, 6.1] sampled 2000 seed 7
explain compare yield by variety levels "A", "B"
"""
CSV = ("plot,variety,yield,before,after\n"
       "1,A,12.4,4.2,4.85\n2,A,13.1,3.95,4.4\n3,A,11.8,4.6,4.6\n4,A,12.9,5.1,5.95\n"
       "5,B,11.0,4.4,4.1\n6,B,10.9,3.8,4.5\n7,B,12.0,4.1,4.9\n8,B,,4.0,4.7\n")

RESULT_KEYS = {"statement", "family", "statistic", "alternative", "p_value", "method",
               "algorithm", "normal_theory", "warnings"}
EXACT_KEYS = {"arrangements"}
MONTE_CARLO_KEYS = {"draws", "p_interval", "seed"}


@pytest.fixture(scope="module")
def workdir(tmp_path_factory):
    d = tmp_path_factory.mktemp("contract")
    (d / "plots.csv").write_text(CSV)
    (d / "analysis.pq").write_text(SCRIPT)
    (d / "clean.pq").write_text('load "plots.csv"\ncompare yield by variety\n')
    return d


def permq_cli(*args, stdin=None, cwd=None):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    return subprocess.run([sys.executable, "-m", "permq", *args], capture_output=True,
                          text=True, input=stdin, cwd=cwd, env=env, timeout=120)


@pytest.fixture(scope="module")
def json_run(workdir):
    done = permq_cli("run", str(workdir / "analysis.pq"), "--format", "json")
    return done, json.loads(done.stdout)


def test_json_is_one_array_and_a_failure_gives_a_nonzero_exit(json_run):
    done, records = json_run
    assert done.returncode != 0
    assert isinstance(records, list)
    assert [r["statement"] for r in records] == SCRIPT.splitlines()[1:]   # load prints nothing


def test_results_carry_the_contract_keys(json_run):
    _, records = json_run
    results = [r for r in records if "p_value" in r]
    assert len(results) == 5
    for r in results:
        assert RESULT_KEYS <= set(r), set(r) ^ RESULT_KEYS
        assert set(r["statistic"]) == {"name", "value"}
        assert isinstance(r["statistic"]["value"], float)
        assert r["alternative"] in ("two-sided", "higher", "lower")
        assert r["method"] in ("exact", "monte-carlo")
        assert 0 < r["p_value"] <= 1
        assert {"test", "statistic", "df", "p_value"} == set(r["normal_theory"])
        assert isinstance(r["warnings"], list)
        assert (EXACT_KEYS if r["method"] == "exact" else MONTE_CARLO_KEYS) <= set(r)
        est = r["estimate"]
        assert {"name", "value", "interval", "level", "method"} <= set(est)
        assert "normal_interval" in r


def test_values_in_the_json(json_run):
    _, records = json_run
    means, ranks, _, signs, one, mc, _ = records
    assert means["family"] == "two-sample" and means["arrangements"] == 35
    assert isinstance(means["arrangements"], int)
    assert means["normal_theory"]["test"].startswith("Welch")
    assert means["normal_theory"]["df"] > 0
    assert means["estimate"]["level"] == 0.95 and len(means["estimate"]["interval"]) == 2
    assert ranks["alternative"] == "higher" and ranks["estimate"]["interval"][1] == "inf"
    assert ranks["normal_theory"]["df"] is None
    assert signs["family"] == "paired" and signs["arrangements"] == 2 ** 7   # one zero dropped
    assert any("zero difference" in w for w in signs["warnings"])
    assert one["family"] == "one-sample" and one["estimate"]["level"] == 0.9
    assert any("dropped 1 row" in w for w in one["warnings"])
    assert mc["method"] == "monte-carlo" and mc["draws"] == 2000 and mc["seed"] == 7
    lo, hi = mc["p_interval"]
    assert lo <= mc["p_value"] <= hi


def test_a_failing_statement_gives_the_error_object_in_place(json_run):
    _, records = json_run
    bad = records[2]
    assert set(bad) == {"statement", "error"}
    assert bad["statement"] == "compare yield by varety"
    assert set(bad["error"]) == {"message", "line", "column"}
    assert bad["error"]["message"] == ("no column 'varety' in table 'plots' "
                                       "(did you mean 'variety'?)")
    assert (bad["error"]["line"], bad["error"]["column"]) == (4, 18)


def test_explain_gives_its_plan(json_run):
    _, records = json_run
    assert records[-1]["plan"]["method"] == "exact"


def test_a_clean_script_on_standard_input_exits_zero(monkeypatch, capsys):
    monkeypatch.setattr(sys, "stdin", io.StringIO("compare [1, 2, 3] vs [4, 5, 6]\n"))
    assert main(["run", "-", "--format", "json"]) == 0
    records = json.loads(capsys.readouterr().out)
    assert len(records) == 1 and records[0]["p_value"] == pytest.approx(2 / 20)


def test_missing_query_file(capsys):
    assert main(["run", "/nonexistent/analysis.pq"]) == 2
    assert "no query file" in capsys.readouterr().err


def test_python_api_to_dict_matches_the_json(json_run, workdir):
    _, records = json_run
    outputs = permq.run(SCRIPT, base_dir=workdir)
    api = [o.to_dict() for o in outputs if isinstance(o, (permq.Result, permq.Failure))]
    from_cli = [r for r in records if "plan" not in r]
    assert json.loads(json.dumps(api)) == from_cli


def test_csv_markdown_and_text_formats(workdir, capsys):
    outputs = permq.run(SCRIPT, base_dir=workdir)
    rows = list(csv.DictReader(io.StringIO(render(outputs, "csv"))))
    assert len(rows) == 7
    assert rows[2]["error"].startswith("no column 'varety'")
    assert float(rows[0]["p_value"]) == outputs[1].outcome.p_value
    md = render(outputs, "markdown")
    assert md.startswith("| statement |")
    assert md.count("\n| `compare") == 5
    assert "Statements that failed" in md and "varety" in md
    for fmt, first in (("csv", "statement,family"), ("markdown", "| statement |")):
        assert main(["run", str(workdir / "analysis.pq"), "--format", fmt]) == 1
        assert capsys.readouterr().out.startswith(first)
    assert main(["run", str(workdir / "clean.pq"), "--format", "text"]) == 0
    assert "compare yield by variety" in capsys.readouterr().out


def test_markdown_leaves_out_an_empty_results_table():
    from permq.render import markdown

    out = permq.run("robustness count 7 of 20 vs 0.5 datasets 100 seed 2")
    text = markdown.render(out)
    assert text.startswith("Robustness:\n") and "| statement | family |" not in text
    both = markdown.render(permq.run("compare [1, 2, 3] vs [4, 5, 6]") + out)
    assert both.startswith("| statement | family |") and "\nRobustness:\n" in both
