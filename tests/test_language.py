"""The language front end: every message of the parser and the binder, where it points, and
what it suggests; a bad statement never stops the others.
"""
import numpy as np
import pandas as pd
import pytest
from lark.exceptions import UnexpectedEOF

import permq
from conftest import failure_of, result_of
from permq.bind.binder import bind
from permq.bind.common import Catalog, Defaults
from permq.data.tables import Table
from permq.errors import BindError, QuerySyntaxError, Span
from permq.pipeline import caret_lines
from permq.syntax import nodes as n
from permq.syntax.grammar import build_parser
from permq.syntax.messages import translate
from permq.syntax.parser import SourceStatement, parse_script, parse_statement


def assert_failure(f, message, line, column, caret, hint=None, kind=None):
    assert f.message == message
    assert (f.line, f.column) == (line, column)
    assert f.caret == caret
    assert f.hint == hint
    if kind:
        assert f.kind == kind


# ---------------------------------------------------------------- the grammar

def test_the_grammar_builds_in_strict_mode():
    parser = build_parser(strict=True, cache=False)   # lark checks terminal collisions (interegular)
    assert parser.parse("compare mass by recipe using ranks") is not None


# ---------------------------------------------------------------- parser messages

def test_misspelled_family_is_pointed_at_with_the_nearest_family(trays):
    f = failure_of("compare mass by recipe using rank", trays)
    assert f.kind == "syntax error"
    assert f.message.startswith("unexpected 'rank'; expected a test family (")
    assert "ranks" in f.message and "normal-scores" in f.message
    assert f.hint == "did you mean 'ranks'?"
    assert (f.line, f.column) == (1, 30)
    assert f.caret == "compare mass by recipe using rank\n" + " " * 29 + "^^^^"


def test_misspelled_alternative(trays):
    f = failure_of("compare mass by recipe alternative highr", trays)
    assert f.message == "unexpected 'highr'; expected an alternative (higher, lower, two-sided)"
    assert f.hint == "did you mean 'higher'?"
    assert (f.line, f.column) == (1, 36)
    assert f.caret.splitlines()[1] == " " * 35 + "^^^^^"


def test_misspelled_option_keyword(trays):
    f = failure_of("compare mass by recipe alternatve higher", trays)
    assert f.message.startswith("unexpected 'alternatve'; expected ")
    assert "'alternative'" in f.message
    assert f.hint == "did you mean 'alternative'?"
    assert (f.line, f.column) == (1, 24)


def test_unknown_first_word():
    f = failure_of("compair [1, 2] vs [3, 4]")
    assert f.message.startswith("unexpected 'compair'; expected 'compare'")
    assert f.hint == "did you mean 'compare'?"
    assert (f.line, f.column) == (1, 1)
    assert f.caret == "compair [1, 2] vs [3, 4]\n^^^^^^^"


def test_statement_that_ends_too_early(trays):
    f = failure_of("compare mass by", trays)
    assert f.message == "the statement ends too early; expected a name"
    assert (f.line, f.column) == (1, 16)
    assert f.caret == "compare mass by\n               ^"


def test_quoted_text_not_closed():
    f = failure_of('load "trays.csv')
    assert f.message.startswith("a quoted text is not closed on this line")
    assert (f.line, f.column) == (1, 6)
    assert f.caret == 'load "trays.csv\n     ^'


def test_unexpected_character(trays):
    f = failure_of("compare mass @ recipe", trays)
    assert f.message.startswith("unexpected character '@'; expected ")
    assert "'by'" in f.message
    assert (f.line, f.column) == (1, 14)
    assert f.caret == "compare mass @ recipe\n             ^"


def test_parse_statement_refuses_empty_text_and_two_statements():
    with pytest.raises(QuerySyntaxError, match="the statement is empty"):
        parse_statement("   # only a comment")
    with pytest.raises(QuerySyntaxError, match="expected one statement, found more") as info:
        parse_statement("compare [1] vs [2]; compare [3] vs [4]")
    assert (info.value.span.line, info.value.span.column) == (1, 21)


def test_end_of_input_from_lark_is_translated():
    err = translate(UnexpectedEOF(expected=["NAME"]), "compare mass by")
    assert isinstance(err, QuerySyntaxError)
    assert err.message == "the statement ends too early"
    assert (err.span.line, err.span.column) == (1, 16)


def test_error_inside_a_list_that_runs_over_two_lines():
    f = failure_of("compare [1, 2,\n   3, @] vs [4, 5]")
    assert f.message.startswith("unexpected character '@'")
    assert (f.line, f.column) == (2, 7)
    assert f.caret == "   3, @] vs [4, 5]\n      ^"


def test_error_on_a_continued_line_points_at_that_line(trays):
    # A statement continued with a backslash: 'rank' stands on line 2, column 17.
    f = failure_of("compare mass by \\\n   recipe using rank", trays)
    assert f.message.startswith("unexpected 'rank'")
    assert (f.line, f.column) == (2, 17)
    assert f.caret == "   recipe using rank\n                ^^^^"


def test_columns_count_from_the_start_of_the_source_line(trays):
    outs = permq.run("use trays;   compare mass by recipee", tables=trays)
    f = outs[1]
    assert isinstance(f, permq.Failure)
    assert (f.line, f.column) == (1, 30)
    assert f.caret == "compare mass by recipee\n                ^^^^^^^"


def test_caret_lines_is_a_pure_function_of_text_and_span():
    st = SourceStatement("compare mass by recipee", 3, 5)
    assert caret_lines(st, Span(3, 21, 3, 28)) == "compare mass by recipee\n                ^^^^^^^"
    assert caret_lines(st, None) == "compare mass by recipee"
    assert caret_lines(st, Span(9, 1, 9, 2)) == "compare mass by recipee"   # outside: no caret


# ---------------------------------------------------------------- names: tables, columns, levels

def test_misspelled_column_gets_the_nearest_name(trays):
    assert_failure(failure_of("compare mas by recipe", trays),
                   "no column 'mas' in table 'trays'", 1, 9,
                   "compare mas by recipe\n        ^^^", hint="did you mean 'mass'?")


def test_column_named_in_another_case(trays):
    f = failure_of("compare Mass by recipe", trays)
    assert f.message == "no column 'Mass' in table 'trays'"
    assert f.hint == "did you mean 'mass'?"


def test_column_with_no_near_name_lists_the_columns(trays):
    f = failure_of("compare zzzz by recipe", trays)
    assert f.hint == "columns: mass, recipe, after, before, label, site, blank"


def test_several_unknown_columns_are_reported_together(trays):
    f = failure_of("compare mas by recipy", trays)
    assert f.message == ("no column 'mas' in table 'trays' (did you mean 'mass'?); "
                         "no column 'recipy' in table 'trays' (did you mean 'recipe'?)")
    assert (f.line, f.column) == (1, 9)


def test_unknown_table_after_in(trays):
    assert_failure(failure_of("compare mass by recipe in trayz", trays),
                   "no table named 'trayz'", 1, 27,
                   "compare mass by recipe in trayz\n                          ^^^^^",
                   hint="did you mean 'trays'?")
    f = failure_of("compare mass by recipe in zzz", trays)
    assert f.hint == "tables: trays"


def test_no_table_loaded():
    f = failure_of("compare mass by recipe")
    assert f.message == "no table is loaded"
    assert f.hint == 'load one first: load "file.csv" as mytable'


def test_no_table_in_use():
    frame = pd.DataFrame({"mass": [1.0, 2.0], "recipe": ["A", "B"]})
    catalog = Catalog(tables={"t": Table("t", frame)}, current=None)
    node = parse_statement("compare mass by recipe")
    with pytest.raises(BindError) as info:
        bind(node, catalog, Defaults())
    assert info.value.message == "no table is in use"
    assert info.value.hint == "say which: use t"


def test_a_session_statement_has_nothing_to_compute():
    node = n.Quit(Span(1, 1, 1, 5))
    with pytest.raises(BindError, match="this statement has nothing to compute"):
        bind(node, Catalog(), Defaults())


def test_misspelled_level(trays):
    assert_failure(failure_of('compare mass by recipe levels "a", "B"', trays),
                   'no level "a" in column \'recipe\'', 1, 31,
                   'compare mass by recipe levels "a", "B"\n' + " " * 30 + "^^^",
                   hint="did you mean 'A'?")


def test_level_with_no_near_name_lists_the_levels(trays):
    f = failure_of('compare mass by recipe levels "A", "Q"', trays)
    assert f.message == 'no level "Q" in column \'recipe\''
    assert f.hint == "levels: A, B"


def test_level_named_twice_and_too_few_levels(trays):
    f = failure_of('compare mass by recipe levels "A", "A"', trays)
    assert (f.message, f.column) == ('level "A" is named twice', 36)
    f = failure_of('compare mass by recipe levels "A"', trays)
    assert (f.message, f.hint, f.column) == ("'levels' needs two or more levels", "levels: A, B", 24)


def test_group_column_with_one_level(trays):
    assert_failure(failure_of("compare mass by site", trays),
                   "column 'site' has 1 level here; a comparison needs two or more", 1, 17,
                   "compare mass by site\n                ^^^^", hint="levels found: one")


def test_levels_order_is_stated(trays):
    r = result_of("compare mass by recipe", trays)
    assert 'levels taken in sorted order (A, B); write levels "B", "A" for the other direction' \
        in r.warnings
    r = result_of('compare mass by recipe levels "B", "A"', trays)
    assert r.effect == "difference in means B - A"
    assert not any("sorted order" in w for w in r.warnings)


# ---------------------------------------------------------------- values

def test_non_numeric_response(trays):
    assert_failure(failure_of("compare label by recipe", trays),
                   "column 'label' is not numeric: row 2 of the file holds 'x'", 1, 9,
                   "compare label by recipe\n        ^^^^^", hint="8 value(s) are not numbers")


def test_duplicate_column_names():
    frame = pd.DataFrame([[1.0, 2.0, "A"], [3.0, 4.0, "B"]], columns=["m", "m", "g"])
    f = failure_of("compare m by g", {"t": frame})
    assert f.message == "table 't' has more than one column named 'm'"
    assert f.hint == "rename the duplicates in the file"


def test_infinite_values():
    frame = pd.DataFrame({"v": [1.0, np.inf, 2.0]})
    f = failure_of("compare v vs 3", {"t": frame})
    assert (f.message, f.column) == ("column 'v' holds an infinite value", 9)
    f = failure_of("compare [1e999, 2] vs [3, 4]")
    assert f.message == "this list holds a value that is not a finite number"
    assert f.caret == "compare [1e999, 2] vs [3, 4]\n        ^^^^^^^^^^"


def test_empty_samples(trays):
    assert_failure(failure_of("compare [] vs [1, 2]"), "this sample is empty", 1, 9,
                   "compare [] vs [1, 2]\n        ^^")
    assert_failure(failure_of("compare blank vs mass", trays), "this sample has no values", 1, 9,
                   "compare blank vs mass\n        ^^^^^")
    assert failure_of("compare blank vs 3", trays).message == "this sample has no values"
    assert failure_of("compare mass vs blank paired", trays).message == \
        "no complete pairs to compare"


def test_missing_values_are_dropped_and_counted(trays):
    r = result_of("compare mass by recipe", trays)
    assert "dropped 1 row with a missing value in 'mass' or 'recipe'" in r.warnings
    assert [g["n"] for g in r.groups] == [3, 4]
    r = result_of("compare after vs before paired", trays)
    assert "dropped 1 row with a missing value in 'after' or 'before'" in r.warnings
    assert r.groups[0]["n"] == 7
    r = result_of("compare before vs 5", trays)
    assert "dropped 1 row with a missing value in 'before'" in r.warnings
    frame = trays["trays"].copy()
    frame.loc[0, "mass"] = np.nan
    r = result_of("compare mass by recipe", {"trays": frame})
    assert "dropped 2 rows with a missing value in 'mass' or 'recipe'" in r.warnings


# ---------------------------------------------------------------- options

def test_family_that_does_not_fit_the_form(trays):
    assert_failure(failure_of("compare mass by recipe using signs", trays),
                   "'signs' is not a test family for two groups", 1, 24,
                   "compare mass by recipe using signs\n" + " " * 23 + "^" * 11,
                   hint="choose one of means, ranks, normal-scores, medians, ansari-bradley, "
                        "welch, brunner-munzel")
    f = failure_of("compare mass vs 12 using medians", trays)
    assert f.message == "'medians' is not a test family for one sample"
    assert f.hint == "choose one of means, ranks, signs"
    f = failure_of("compare after vs before paired using normal-scores", trays)
    assert f.message == "'normal-scores' is not a test family for paired data"


def test_option_that_does_not_apply(trays):
    f = failure_of("compare mass by recipe paired", trays)
    assert (f.message, f.column) == ("'paired' does not apply to two groups", 24)
    assert f.hint == "'paired' goes with two columns: compare after vs before paired"
    f = failure_of("compare [1, 2] vs [3, 4] within recipe")
    assert f.message == "'within' does not apply to two samples"
    assert f.hint == "'within' goes with a group column: compare mass by recipe within bench"


def test_confidence_levels():
    f = failure_of("compare [1, 2, 3] vs [4, 5, 6] confidence 95")
    assert (f.message, f.hint) == ("confidence 95 is not a level", "write 95% or 0.95")
    assert f.caret == "compare [1, 2, 3] vs [4, 5, 6] confidence 95\n" + " " * 31 + "^" * 13
    for bad in ("100%", "0%", "0"):
        f = failure_of(f"compare [1, 2, 3] vs [4, 5, 6] confidence {bad}")
        assert f.message == "the confidence level must lie strictly between 0% and 100%"
    assert result_of("compare [1, 2, 3] vs [4, 5, 6] confidence 0.9").estimate.level == 0.9


def test_method_options():
    f = failure_of("compare [1, 2, 3] vs [4, 5, 6] exact sampled 1000")
    assert (f.message, f.column) == ("'exact' and 'sampled' ask for different methods; keep one",
                                     38)
    assert failure_of("compare [1, 2] vs [3, 4] sampled 10").message == \
        "'sampled' needs at least 100 draws"
    assert failure_of("compare [1, 2] vs [3, 4] sampled 2000000000").message == \
        "'sampled' is limited to 1,000,000,000 draws"


# ---------------------------------------------------------------- paired and one sample forms

def test_paired_forms():
    f = failure_of("compare [1, 2, 3] vs [1, 2] paired")
    assert (f.message, f.column) == ("paired lists must have the same length (3 and 2 values)", 22)
    f = failure_of("compare [1, 2] vs [3, 4] vs [5, 6] paired")
    assert (f.message, f.column) == ("'paired' compares exactly two columns or lists", 9)


def test_paired_needs_two_of_a_kind(trays):
    f = failure_of("compare [1, 2, 3] vs mass paired", trays)
    assert f.message == "'paired' needs two columns or two lists of the same kind"
    f = failure_of("compare mass vs 12 paired", trays)
    assert (f.message, f.column) == (
        "'paired' needs two columns; against a value the test is one-sample", 20)


def test_a_single_value_stands_last(trays):
    assert_failure(failure_of("compare 12 vs mass", trays),
                   "a single value can only stand last, as in: compare mass vs 12.5", 1, 9,
                   "compare 12 vs mass\n        ^^")


# ---------------------------------------------------------------- files

def test_missing_file_with_and_without_a_near_name(tmp_path):
    (tmp_path / "trays.csv").write_text("mass,recipe\n1,A\n2,B\n")
    out = permq.run('load "trays.cvs"\nload "nothing.csv"', base_dir=tmp_path)
    assert [o.kind for o in out] == ["data error", "data error"]
    assert out[0].message == "no file 'trays.cvs'"
    assert out[0].hint == "did you mean 'trays.csv'?"
    assert (out[1].message, out[1].line, out[1].column) == ("no file 'nothing.csv'", 2, 1)


def test_unknown_file_type(tmp_path):
    (tmp_path / "data.json").write_text("{}")
    f = permq.run('load "data.json"', base_dir=tmp_path)[0]
    assert f.message == "cannot read 'data.json': unknown file type '.json'"
    assert f.hint == "use .csv, .txt, .tsv, .parquet, .xlsx or .xls"


def test_use_of_an_unknown_table(trays):
    f = failure_of("use trayz", trays)
    assert (f.message, f.hint, f.column) == ("no table named 'trayz'", "did you mean 'trays'?", 5)


# ---------------------------------------------------------------- a file with a bad statement

def test_the_other_statements_still_run(tmp_path):
    (tmp_path / "t.csv").write_text("mass,recipe\n12.1,A\n11.0,A\n13.2,A\n10.1,B\n9.8,B\n10.6,B\n")
    script = ("load \"t.csv\" as t\n"
              "compare mass by recipe using rank\n"
              "compare mass by recipe using ranks\n"
              "\n"
              "compare mas by recipe ; compare mass by recipe alternative higher\n")
    out = permq.run(script, base_dir=tmp_path)
    kinds = [type(o).__name__ for o in out]
    assert kinds == ["Note", "Failure", "Result", "Failure", "Result"]
    assert [o.line for o in out] == [1, 2, 3, 5, 5]
    assert out[2].outcome.p_value == pytest.approx(2 / 20)
    assert out[4].outcome.p_value == pytest.approx(1 / 20)
    assert (out[3].line, out[3].column) == (5, 9)


def test_parse_script_keeps_every_statement():
    stmts = parse_script("compare [1] vs [2]\ncompare [1] vs\ncompare [3] vs [4]")
    assert [s.error is None for s in stmts] == [True, False, True]
    assert [s.line for s in stmts] == [1, 2, 3]



@pytest.mark.parametrize("text, absent, present", [
    ("compare [1, 2] vs [3, 4] 5", {"datasets", "shift", "significance", "adjusting", "','"},
     {"'alternative'", "'adjust'", "'top'", "'for'"}),
    ("relate a to b 5", {"'datasets'", "'adjust'", "'by'", "'for'", "'top'", "','"},
     {"'adjusting'", "'alternative'"}),
    ("count [[1, 2], [3, 4]] 5", {"'adjust'", "'adjusting'", "'datasets'"}, {"'alternative'"}),
    ("robustness compare [1, 2] vs [3, 4] 5", {"'rows'", "'columns'"},
     {"'datasets'", "'shift'", "'significance'", "'adjusting'"}),   # compare Y by G adjusting
])
def test_expected_lists_name_only_options_the_statement_takes(text, absent, present):
    """The grammar shares one option rule; an error lists only the options this kind of
    statement can take (the binder refuses the others), and only words that can follow there
    (the parser's own accepted set, not the merged lookaheads of its tables)."""
    from lark.exceptions import UnexpectedToken

    from permq.syntax.grammar import parser
    from permq.syntax.messages import expected_words, fitting

    with pytest.raises(UnexpectedToken) as info:
        parser().parse(text)
    words = set(expected_words(fitting(info.value.accepts or info.value.expected, text)))
    assert present <= words, (present - words, words)
    assert not absent & words, absent & words
    f = permq.run(text)[0]
    assert isinstance(f, permq.Failure) and f.message.startswith("unexpected '5'; expected ")


def test_help_examples_bind_on_the_demo():
    """Every example on the help pages is a statement that binds on the demo's tables (those
    marked 'your ...' need the user's own columns and are only parsed)."""
    import re

    from permq.help import TOPICS
    from permq.robustness.executor import check_settings, without_check_options
    from permq.syntax.parser import parse_script

    from conftest import ROOT

    session = permq.Session(base_dir=ROOT / "demo")
    names = ("trays", "plots", "seedlings", "sprays", "beans", "lamps", "litters", "varieties",
             "doses", "bulbs")
    for name in names:
        assert isinstance(session.run(f'load "{name}.csv"')[0], permq.Note)
    seen = 0
    for page in set(TOPICS.values()):
        for line in page.splitlines():
            m = re.match(r"^  ((?:robustness )?(?:compare|relate|count) .*?)(?:\s{2,}(.*)|$)", line)
            if not m:
                continue
            st = parse_script(m.group(1))[0]
            assert st.error is None, (line, st.error)
            seen += 1
            if "your " in (m.group(2) or ""):
                continue
            node = st.node
            if isinstance(node, n.Robustness):
                check_settings(n.options_of(node.analysis))
                node = without_check_options(node.analysis)
            problems = []
            for name in names:
                session.catalog.current = name
                try:
                    bind(node, session.catalog, session.defaults)
                    break
                except (BindError, permq.errors.PermqError) as err:
                    problems.append(str(err))
            else:
                raise AssertionError((line, problems))
    assert seen >= 25


@pytest.mark.parametrize("text, word, hint", [
    ("compare yield by dose withinblock in plots", "withinblock", "within block"),
    ("compare mass by recipe usingranks", "usingranks", "using ranks"),
    ("compare mass by recipe sampled 100seed 3", "100seed", "100 seed"),
    ("compare [1, 2] vs0", "vs0", "vs 0"),
])
def test_words_run_together_are_refused_not_split(text, word, hint):
    """Where only keywords can follow, the lexer would read 'withinblock' as 'within block';
    a statement the user did not write is refused, with the place and the likely reading."""
    f = permq.run(text)[0]
    assert isinstance(f, permq.Failure), f
    assert f.message == f"unexpected '{word}': two words run together"
    assert f.hint == f"did you mean '{hint}'?"
    col = text.index(word)
    assert f.column == col + 1 and f.caret.splitlines()[1] == " " * col + "^" * len(word)


def test_words_that_merely_start_with_a_keyword_are_names():
    r = permq.run("compare massive by recipe in t", tables={"t": pd.DataFrame(
        {"massive": [1.0, 2.0, 3.0, 4.0], "recipe": ["a", "a", "b", "b"]})})[0]
    assert isinstance(r, permq.Result), r
