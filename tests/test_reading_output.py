"""The result blocks as a practitioner reads them: one natural order of levels everywhere,
group summaries that tell groups apart, counts and plurals written out, labels that name
levels, hints that fit the statement, one interval to a line."""
import math
import statistics
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import pandas as pd
import pytest

import permq
from permq.frontends.shell.completion import suggest
from permq.render import text as render_text

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo"

DOSES = ["control", "10 mg/kg", "100 mg/kg", "30 mg/kg"]


def one(statement, tables=None, base_dir=None):
    [r] = permq.Session(tables=tables or {}, base_dir=base_dir).run(statement)
    assert not isinstance(r, permq.Failure), f"{r.message} ({r.hint})"
    return r


def by_dose_value(levels):
    """The reference order: by the number each level starts with (words after numbers)."""
    def key(v):
        head = v.split()[0]
        return (0, float(head)) if head.replace(".", "", 1).isdigit() else (1, v)
    return sorted(levels, key=key)


@pytest.fixture
def doses():
    rows = [(d, y, "yes" if i % 2 else "no") for i, (d, y) in enumerate(
        zip(DOSES * 3, [1.2, 1.1, 2.2, 1.9, 1.4, 1.6, 2.0, 1.3, 1.0, 1.5, 2.1, 1.7]))]
    return {"t": pd.DataFrame(rows, columns=["dose", "w", "dead"])}


def test_levels_in_results_follow_the_natural_order(doses):
    expected = by_dose_value(DOSES)
    assert expected == ["10 mg/kg", "30 mg/kg", "100 mg/kg", "control"]
    r = one("compare w by dose in t", doses)
    assert [g["name"] for g in r.groups] == expected
    table = one("count dead by dose in t", doses).extra["table"]
    assert table["columns"] == expected


def test_describe_orders_numbers_by_value(doses):
    frame = pd.DataFrame({"d": [0, 10, 100, 30, 0, 10], "x": [1.0, 2, 3, 4, 5, 6]})
    s = permq.Session(tables={"n": frame, **doses})
    [note] = s.run("describe n")
    [d_row] = [row for row in note.data["columns"] if row["column"] == "d"]
    assert d_row["levels"] == [str(v) for v in sorted({0, 10, 100, 30})]
    [note] = s.run("describe t")
    [dose_row] = [row for row in note.data["columns"] if row["column"] == "dose"]
    assert dose_row["levels"] == by_dose_value(DOSES)


def test_completion_offers_levels_in_the_same_order(doses):
    s = permq.Session(tables=doses)
    s.run("use t")
    words = [w for w, _ in suggest('compare w by dose levels ', s.catalog)]
    assert words == [f'"{v}"' for v in by_dose_value(DOSES)]


def test_group_summaries_carry_the_data_decimals_plus_one():
    a, b = ["10.010", "10.012", "10.013", "10.011"], ["10.013", "10.012", "10.014", "10.011"]
    r = one(f"compare [{', '.join(a)}] vs [{', '.join(b)}]")
    text = render_text.render_one(r)
    for values in (a, b):
        exact = sum(Fraction(v) for v in values) / len(values)        # brute force, exact
        mean = Decimal(exact.numerator) / Decimal(exact.denominator)
        assert f"mean {mean.quantize(Decimal('0.0001'))}" in text
        sd = statistics.stdev([Fraction(v) for v in values])
        assert f"sd {float(sd):.4f}" in text
    assert "mean 10.0115" in text and "mean 10.0125" in text      # apart, as the data are


def test_zero_spread_shows_as_zero_in_the_summaries():
    r = one("compare [4.85, 5.95, 4.40] vs [4.20, 5.30, 3.75] paired")
    line = next(ln for ln in render_text.render_one(r).splitlines() if ln.lstrip().startswith("groups"))
    assert line.endswith("mean 0.650  median 0.650  sd 0.000")


def test_one_format_per_block_of_summaries():
    r = one(f'compare mass by recipe in trays', {"trays": pd.read_csv(DEMO / "trays.csv")})
    lines = [ln for ln in render_text.render_one(r).splitlines()[2:5]]
    for ln in lines:                     # mass is written to 1 decimal: 2 in every summary
        for word in ("mean", "median", "sd"):
            value = ln.split(f" {word} ")[1].split()[0]
            assert len(value.split(".")[1]) == 2, ln


def test_a_stratified_statistic_names_the_first_group_not_group_0():
    r = one('compare yield by dose levels "40", "0" within block in plots',
            {"plots": pd.read_csv(DEMO / "plots.csv")})
    assert r.outcome.statistic_name == "stratified sum of the first group's values " \
                                       "(within-block permutation)"
    assert "group-0" not in render_text.render_one(r)


def test_counts_are_written_with_separators():
    r = one('compare mass by recipe ordered "B" < "A" < "C" using ranks in trays',
            {"trays": pd.read_csv(DEMO / "trays.csv")})
    total = math.factorial(18) // math.factorial(6) ** 3                  # 6 + 6 + 6 units
    assert f"{total:,} assignments are too many to list" in r.estimate.method
    assert f"{total:,} arrangements" in render_text.render_one(r)


def test_one_column_is_one_column(tmp_path):
    (tmp_path / "one.csv").write_text("y\n1\n2\n")
    [note] = permq.Session(base_dir=tmp_path).run('load "one.csv"')
    assert note.text == "loaded 'one': 2 rows, 1 column (now in use)"


def test_the_within_hint_fits_a_statement_that_has_a_group_column():
    trays = {"trays": pd.read_csv(DEMO / "trays.csv")}
    [f] = permq.Session(tables=trays).run("compare mass, light by recipe within bench in trays")
    assert isinstance(f, permq.Failure)
    assert "goes with a group column" not in f.hint and "one response at a time" in f.hint
    [f] = permq.Session(tables=trays).run("relate mass to light within bench in trays")
    assert "goes with a group column" in f.hint         # here there is none


def test_each_textbook_interval_on_a_line_of_its_own():
    r = one('compare mass by recipe ordered "B" < "A" < "C" using ranks alternative higher '
            'in trays', {"trays": pd.read_csv(DEMO / "trays.csv")})
    lines = render_text.render_one(r).splitlines()
    [iv] = [ln for ln in lines if ln.lstrip().startswith("95% interval")]
    assert iv.split() == ["95%", "interval", "none", "-"]
    [also] = [ln for ln in lines if "t interval for the slope" in ln]
    lo = r.also_normal[0].interval[0]
    assert also.split()[:3] == ["also", "95%", "interval"] and f"[{lo:.3f}, +inf]" in also
