"""The interactive shell: completion from the grammar, highlighting, toolbar, history, keys.

Completion is checked on the pure `suggest` (every prefix of every demo statement, random
text, and a walk over the grammar that must reach every keyword); keys, history and
multi-line input through prompt_toolkit's pipe input with a dummy output.
"""
from __future__ import annotations

import os
import signal
import threading
import time
from pathlib import Path

import pytest
from hypothesis import given, settings, strategies as st
from prompt_toolkit.input import create_pipe_input
from prompt_toolkit.output import DummyOutput
from pygments.token import Comment, Keyword, Name, Number, Operator, String

from permq.frontends.shell import start_shell
from permq.frontends.shell import vocabulary as vocab
from permq.frontends.shell.completion import current_word, suggest
from permq.frontends.shell.history import history_path, open_history
from permq.frontends.shell.lexer import lexer_class
from permq.frontends.shell.repl import PROMPT, Shell
from permq.frontends.shell.running import StopFlag, run_stoppable
from permq.frontends.shell.scan import needs_more, one_line
from permq.frontends.shell.toolbar import toolbar, toolbar_text
from permq.pipeline import Session
from permq.result import Failure
from permq.syntax.grammar import parser
from permq.syntax import nodes as n
from permq.syntax.parser import parse_script

DEMO = Path(__file__).resolve().parents[1] / "demo"
NUMBERS = {"SIGNED_NUMBER", "INT", "PERCENT", "DURATION"}
ANALYSES = tuple(getattr(n, k) for k in ("Compare", "Relate", "Count", "Explain", "Robustness")
                 if hasattr(n, k))


def demo_session() -> Session:
    s = Session(base_dir=DEMO)
    s.run('load "trays.csv" as trays\nload "seedlings.csv" as pots\nuse trays')
    return s


def words(text, session, after=""):
    return [w for w, _ in suggest(text, session.catalog, session.base_dir, after)]


def lex(text):
    return parser().parse_interactive(text).exhaust_lexer()


# ---------------------------------------------------------------- suggest on the demo

def test_every_prefix_of_the_demo_gives_the_word_that_follows():
    session = Session(base_dir=DEMO)
    checked = 0
    for stmt in parse_script((DEMO / "greenhouse.pq").read_text()):
        t = stmt.text
        for k in range(len(t) + 1):
            got = suggest(t[:k], session.catalog, DEMO, t[k:])
            assert all(isinstance(a, str) and isinstance(b, str) and a and b for a, b in got)
        tokens = lex(t)
        for prev, tok in zip([None] + tokens, tokens):
            if tok.type in NUMBERS or not str(tok)[0].isalpha() and tok.type != "STRING":
                continue
            if prev is not None and prev.type == "AS":
                continue                     # a new name: nothing to guess
            if prev is not None and str(prev) in ("picture", "save"):
                continue                     # a file to be written: nothing to guess
            for cut in sorted({0, 1, len(tok) // 2}):
                before = t[:tok.start_pos] + str(tok)[:cut]
                offered = words(before, session, t[len(before):])
                assert str(tok) in offered, (before, offered)
                checked += 1
        if not isinstance(stmt.node, ANALYSES):      # only what changes the catalog runs
            assert not isinstance(session.run_statement(stmt), Failure), stmt.text
    assert checked > 150


def test_statement_starts_offer_the_verbs_and_nothing_else():
    s = demo_session()
    got = words("", s)
    assert {"compare", "relate", "count", "load", "use", "help", "quit"} <= set(got)
    assert "mass" not in got and "by" not in got
    assert words("co", s) == sorted(w for w in got if w.startswith("co"))


def test_columns_of_the_table_in_use_or_named_by_in():
    s = demo_session()
    got = set(words("compare ", s))
    assert {"tray", "recipe", "mass", "bench", "light"} <= got
    assert got - {"tray", "recipe", "mass", "bench", "light"} <= vocab.all_words() - set(vocab.verbs())
    assert words("compare af", s) == []                       # 'after' is in pots
    assert words("compare af", s, " vs before in pots") == ["after"]
    assert words("compare after vs b", s, " in pots paired") == ["before"]
    assert words("compare mass vs 12 in trays using ranks ", s).count("in") == 0


def test_tables_after_use_describe_and_in():
    s = demo_session()
    assert words("use ", s) == ["trays", "pots"]
    assert words("describe p", s) == ["pots"]
    assert words("compare after vs before in ", s) == ["trays", "pots"]


def test_levels_of_the_group_column_after_levels_and_ordered():
    s = demo_session()
    assert words("compare mass by recipe levels ", s) == ['"A"', '"B"', '"C"']
    assert words('compare mass by recipe levels "A", ', s) == ['"B"', '"C"']
    assert words("compare mass by recipe levels B", s) == ['"B"']   # quote added
    assert words('compare mass by bench ordered "east" < ', s) == ['"north"', '"south"']


def test_families_fit_the_verb():
    s = demo_session()
    compare = set(words("compare mass by recipe using ", s))
    relate = set(words("relate mass to light using ", s))
    count = set(words("count recipe by bench using ", s))
    assert {"means", "ranks", "normal-scores", "medians"} <= compare
    assert relate == {"pearson", "spearman", "kendall", "slope", "logistic"}
    assert {"fisher", "chi-square"} <= count and "pearson" not in count
    assert compare | relate | count == set(vocab.value_sets()["FAMILY"])


def test_options_already_given_are_not_offered_again():
    s = demo_session()
    got = words('compare mass by recipe using ranks ', s)
    assert "using" not in got and "levels" in got and "confidence" in got


def test_settings_help_topics_and_values():
    s = demo_session()
    assert set(words("set ", s)) == set(vocab.value_sets()["SETTING"])
    assert words("set alternative ", s) == ["higher", "lower", "two-sided"]
    assert "json" in words("set format ", s)
    assert "95%" in words("set confidence ", s) and "90%" in words("compare mass by recipe confidence ", s)
    assert "families" in words("help ", s)
    assert set(words("show ", s)) == {"tables", "settings"}


def test_file_paths_after_load(tmp_path):
    (tmp_path / "plots.csv").write_text("a\n1\n")
    (tmp_path / "notes.md").write_text("x")
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "inner.tsv").write_text("a\n1\n")
    s = Session(base_dir=tmp_path)
    assert words("load ", s) == ['"plots.csv"', '"sub/']
    assert words('load "p', s) == ['"plots.csv"']
    assert words('load "sub/', s) == ['"sub/inner.tsv"']
    assert words("load 'su", s) == ["'sub/"]
    assert words('load "nowhere/', s) == []
    assert words('load "plots.csv" as ', s) == ["plots"]


def test_comments_numbers_and_wrong_prefixes_give_nothing():
    s = demo_session()
    assert words("compare mass by recipe # lev", s) == []
    assert words("compare [4.1, 5", s) == []
    assert words("compare mass by by by ", s) == []
    assert words("describe trays; use ", s) == ["trays", "pots"]
    assert current_word('compare mass by recipe levels "A", "B') == '"B'
    assert current_word("compare mass") == "mass"


def test_a_walk_over_the_grammar_reaches_every_keyword():
    """Extend prefixes by what the parser accepts; every grammar word must be suggested."""
    fill = {"NAME": "x", "QUOTED_NAME": "`x y`", "STRING": '"A"', "SIGNED_NUMBER": "1",
            "INT": "2", "PERCENT": "95%", "DURATION": "5s", "WORD": "w", "LSQB": "[",
            "RSQB": "]", "COMMA": ",", "LESSTHAN": "<"}
    empty = Session(base_dir=DEMO)
    seen_states, offered, frontier = set(), set(), [""]
    for _ in range(7):
        nxt = []
        for prefix in frontier:
            ip = parser().parse_interactive(prefix)
            ip.exhaust_lexer()
            state = tuple(ip.parser_state.state_stack)
            if state in seen_states:
                continue
            seen_states.add(state)
            offered.update(words(prefix, empty))
            for term in ip.accepts():
                for w in vocab.words_of(term) or [fill.get(term)]:
                    if w is not None:
                        nxt.append(f"{prefix}{w} ")
        frontier = nxt
    assert vocab.all_words() - offered == set()


_PIECES = sorted(vocab.all_words()) + ['"', "'", "`", "[", "]", ",", "<", "#", ";", " ",
                                       "\\\n", "\n", "95%", "mass", "recipe", '"A"', "12",
                                       "-0.5", "trays", "é", "\t", "]]", "%"]


@settings(max_examples=300, deadline=None)
@given(st.lists(st.sampled_from(_PIECES), max_size=12).map("".join), st.text(max_size=8))
def test_no_prefix_crashes_the_completer(text, tail):
    got = suggest(text + tail, _HYPO_SESSION.catalog, DEMO, tail)
    assert isinstance(got, list)
    assert all(isinstance(w, str) and isinstance(d, str) for w, d in got)


_HYPO_SESSION = demo_session()


# ---------------------------------------------------------------- scanning the input

def test_continuation_rules():
    assert needs_more("compare [4.1, 5.3,")
    assert needs_more("compare mass by recipe \\")
    assert needs_more("count [[1, 2], [3, 4]  # rows")
    assert not needs_more("compare mass by recipe")
    assert not needs_more('compare mass by recipe levels "[A"')
    assert not needs_more("compare mass by recipe # a [ comment")


def test_statements_over_lines_become_one_line():
    assert one_line("compare [4.1, 5.3,\n   4.8] vs \\\n  [6.0, 5.9]") == \
        "compare [4.1, 5.3, 4.8] vs [6.0, 5.9]"
    assert one_line("compare [1, # first\n 2] vs 3") == "compare [1, 2] vs 3"
    assert one_line("use trays\ncompare mass by recipe # note") == \
        "use trays\ncompare mass by recipe # note"


# ---------------------------------------------------------------- highlighting, toolbar, history

def test_highlighting_uses_the_grammar_words():
    toks = [(t, v) for t, v in lexer_class()().get_tokens(
        'compare mass by recipe levels "A", "B" using normal-scores confidence 90% # why')
        if v.strip()]
    kinds = dict((v, t) for t, v in toks)
    assert kinds["compare"] in Keyword and kinds["levels"] in Keyword
    assert kinds["by"] in Operator and kinds["normal-scores"] in Name.Constant
    assert kinds["mass"] is Name and kinds['"A"'] in String and kinds["90%"] in Number
    assert kinds["# why"] in Comment
    for w in vocab.all_words():
        (t, v), = [(t, v) for t, v in lexer_class()().get_tokens(w) if v.strip()]
        assert t is not Name and v == w, (w, t)


def test_toolbar_shows_table_size_and_defaults():
    s = demo_session()
    text = toolbar_text(s)
    assert "trays" in text and "19 rows × 5 columns" in text
    assert "confidence 95%" in text and "seed from statement" in text and "budget 5 s" in text
    s.run("set seed 11\nset confidence 90%\nset budget 30s")
    text = toolbar_text(s)
    assert "confidence 90%" in text and "seed 11" in text and "budget 30 s" in text
    assert "no table in use" in toolbar_text(Session())
    narrow = "".join(t for _, t in toolbar(s, 80))
    assert "trays" in narrow and "Tab completes" not in narrow and len(narrow) <= 80
    assert "Tab completes" in "".join(t for _, t in toolbar(s, 160))


def test_history_location(tmp_path):
    home = tmp_path
    assert history_path({"PERMQ_HISTORY": "/x/h"}, "linux", home) == Path("/x/h")
    assert history_path({"XDG_STATE_HOME": "/s"}, "linux", home) == Path("/s/permq/history")
    assert history_path({}, "linux", home) == home / ".local/state/permq/history"
    assert history_path({"XDG_STATE_HOME": "rel"}, "linux", home) == \
        home / ".local/state/permq/history"
    assert history_path({}, "darwin", home) == home / "Library/Application Support/permq/history"
    assert history_path({"LOCALAPPDATA": "C:/L"}, "win32", home) == Path("C:/L/permq/history")


def test_history_falls_back_to_memory_when_the_folder_cannot_be_made(tmp_path):
    blocker = tmp_path / "file"
    blocker.write_text("")
    history, problem = open_history(blocker / "history")
    assert "cannot write" in problem and type(history).__name__ == "InMemoryHistory"


# ---------------------------------------------------------------- keys, through a pipe

def drive(keys, tmp_path, files=(), pause=0.25):
    """Run the shell on piped keys; each item is sent after a pause (completion and search
    finish asynchronously). Returns (exit status, everything printed)."""
    printed = []
    with create_pipe_input() as inp:
        def feed():
            for k in keys:
                time.sleep(pause)
                inp.send_text(k)
        sender = threading.Thread(target=feed, daemon=True)
        sender.start()
        rc = start_shell(list(files), input=inp, output=DummyOutput(), write=printed.append,
                         history_file=tmp_path / "history")
        sender.join(5)
    return rc, "".join(printed)


def test_tab_completes_and_history_is_kept_and_searchable(tmp_path):
    files = [str(DEMO / "trays.csv")]
    rc, out = drive(["describe tr\t", "\r", "show tables\r", "\x04"], tmp_path, files)
    assert rc == 0
    assert "levels / range" in out and "east, north, south" in out   # describe trays ran
    assert "* trays" in out
    saved = (tmp_path / "history").read_text()
    assert "+describe trays" in saved and "+show tables" in saved
    # a new shell: Up brings back the last statement, Ctrl-R finds an older one
    rc, out = drive(["\x1b[A", "\r", "\x12descr", "\r", "\r", "\x04"], tmp_path, files)
    assert rc == 0
    assert "* trays" in out and "levels / range" in out


def test_ctrl_c_at_the_prompt_drops_the_line_and_ctrl_d_leaves(tmp_path):
    rc, out = drive(["compare junk by junk", "\x03", "show settings\r", "\x04",
                     "show tables\r"], tmp_path)
    assert rc == 0
    assert "confidence 0.95" in out
    assert "junk" not in out and "no tables loaded" not in out      # nothing after Ctrl-D


def test_quit_leaves(tmp_path):
    rc, out = drive(["quit\r", "show settings\r"], tmp_path)
    assert rc == 0 and "confidence 0.95" not in out


def test_a_statement_over_several_lines(tmp_path):
    rc, out = drive(["compare [4.1, 5.3,\r", "4.8] vs \\\r", "[6.0, 5.9, 7.2]\r", "\x04"],
                    tmp_path)
    assert "── compare [4.1, 5.3, 4.8] vs [6.0, 5.9, 7.2] ─" in out
    assert "20 arrangements" in out


def test_files_on_the_command_line(tmp_path):
    query = tmp_path / "q.pq"
    query.write_text(f'load "{DEMO / "seedlings.csv"}" as pots\ncompare after vs before paired\n')
    rc, out = drive(["\x04"], tmp_path, [str(DEMO / "trays.csv"), str(query),
                                         str(tmp_path / "missing.pq")])
    assert "loaded 'trays'" in out and "loaded 'pots'" in out
    assert "── compare after vs before paired" in out
    assert "cannot read query file" in out


# ---------------------------------------------------------------- printing and cancelling

def test_notes_print_as_text_whatever_the_format():
    printed = []
    shell = Shell(demo_session(), write=printed.append)
    shell.handle("set format json")
    assert "format set to json" in "".join(printed)
    printed.clear()
    shell.handle('compare mass by recipe levels "A", "B"')
    import json
    (obj,) = json.loads("".join(printed))
    assert obj["p_value"] == pytest.approx(0.0065, abs=5e-5) and obj["method"] == "exact"


def test_an_error_points_under_the_typed_line():
    printed = []
    shell = Shell(demo_session(), write=printed.append)
    shell.handle("compare mass by recipe usng ranks")
    lines = "".join(printed).splitlines()
    assert lines[0] == " " * (len(PROMPT) + len("compare mass by recipe ")) + "^^^^"
    assert lines[1].startswith("syntax error: unexpected 'usng'")
    assert lines[2] == "  hint: did you mean 'using'?"
    printed.clear()
    shell.handle("compare mas by recipe")
    lines = "".join(printed).splitlines()
    assert lines[0] == " " * (len(PROMPT) + len("compare ")) + "^^^"
    assert "did you mean 'mass'?" in lines[2]


def interrupts(*times):
    """SIGINT to this process at the given times (seconds from now), as Ctrl-C would."""
    return [threading.Timer(t, os.kill, (os.getpid(), signal.SIGINT)) for t in times]


@pytest.fixture
def sigint():
    old = signal.signal(signal.SIGINT, signal.default_int_handler)
    started = []
    yield lambda *times: started.extend(t for t in interrupts(*times) if t.start() or True)
    for t in started:
        t.cancel()
    signal.signal(signal.SIGINT, old)


@pytest.mark.skipif(os.name != "posix", reason="POSIX signals")
def test_ctrl_c_during_a_long_run_cancels_and_keeps_the_session(sigint):
    stop = StopFlag()
    session = Session(base_dir=DEMO, should_stop=stop)
    session.run('load "trays.csv" as trays\nload "seedlings.csv" as pots\nuse trays')
    printed = []
    shell = Shell(session, write=printed.append, stop=stop)
    history = list(session.history)
    started = time.monotonic()
    sigint(0.8, 10.0)      # the second one is a watchdog: fail rather than hang
    assert shell.handle('compare mass by recipe levels "A","B" sampled 200000000')
    took = time.monotonic() - started
    assert took < 5, "".join(printed)
    assert "stopping the running statement" in "".join(printed)
    assert "cancelled; no result kept" in "".join(printed)
    assert session.history == history and set(session.catalog.tables) == {"trays", "pots"}
    assert not stop()
    printed.clear()
    shell.handle('compare mass by recipe levels "A", "B"')
    assert "0.0065" in "".join(printed)       # exact p, as in `permq run demo/greenhouse.pq`


@pytest.mark.skipif(os.name != "posix", reason="POSIX signals")
def test_a_second_ctrl_c_interrupts_work_that_never_checks(sigint):
    def stubborn():
        end = time.monotonic() + 8
        while time.monotonic() < end:
            sum(range(1000))
        return "finished"

    notes = []
    started = time.monotonic()
    sigint(0.3, 0.6)
    with pytest.raises(KeyboardInterrupt):
        run_stoppable(stubborn, StopFlag(), notes.append)
    assert time.monotonic() - started < 3 and notes == [1, 2]


@pytest.mark.skipif(os.name != "posix", reason="POSIX signals")
def test_one_ctrl_c_stops_work_that_checks(sigint):
    stop = StopFlag()

    def polite():
        end = time.monotonic() + 8
        while time.monotonic() < end:
            if stop():
                return "stopped"
            time.sleep(0.01)
        return "finished"

    sigint(0.3)
    assert run_stoppable(polite, stop) == "stopped" and not stop()


def test_save_replays_to_the_same_numbers(tmp_path):
    session = demo_session()
    session.base_dir = tmp_path
    printed = []
    shell = Shell(session, write=printed.append)
    shell.handle('compare mass by recipe levels "A", "C" sampled 2000')
    shell.handle('save "again.pq"')
    first = [ln for ln in "".join(printed).splitlines() if ln.strip().startswith("p (")]
    replay = Session(base_dir=tmp_path).run((tmp_path / "again.pq").read_text())
    from permq.render import render
    again = [ln for ln in render(replay, "text").splitlines() if ln.strip().startswith("p (")]
    assert first and first == again


def test_completion_offers_only_the_options_a_statement_takes():
    session = demo_session()
    relate = set(words("relate mass to light ", session))
    assert {"using", "adjusting", "alternative", "in"} <= relate
    assert not relate & {"within", "levels", "paired", "datasets", "adjust", "top"}
    compare = set(words("compare mass by recipe ", session))
    assert {"within", "levels", "adjust", "pairwise"} <= compare and "datasets" not in compare
    check = set(words("robustness compare mass by recipe ", session))
    assert {"datasets", "shift", "significance", "adjusting"} <= check and "rows" not in check
    assert "adjusting" in compare and "datasets" not in compare
