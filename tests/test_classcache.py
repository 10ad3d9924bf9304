"""The kept compiled methods of permq's dataclasses (permq/classcache.py): a class made with
them behaves as one made by `dataclasses` alone, the file is read back in a fresh process, and
a missing, garbled or unwritable file only means compiling as usual."""
import dataclasses
import json
import subprocess
import sys
from pathlib import Path

import pytest

from permq import classcache

ROOT = Path(__file__).resolve().parents[1]


def _make():
    @dataclasses.dataclass(frozen=True)
    class Point:
        span: int
        label: str = "a"
        tags: tuple = ()

    return Point


@pytest.fixture
def cache_home(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    monkeypatch.setitem(classcache._state, "codes", None)
    monkeypatch.setitem(classcache._state, "used", set())
    return tmp_path


def test_a_class_made_with_kept_methods_behaves_as_a_plain_dataclass(cache_home):
    plain = _make()
    with classcache.active():
        kept = _make()
    assert not hasattr(dataclasses, "exec")              # the stand-in is gone afterwards
    assert classcache.cache_file().is_file()
    a, b = kept(1, "x", (2,)), kept(1, "x", (2,))
    assert a == b and hash(a) == hash(b) and a != kept(2)
    assert repr(a) == repr(plain(1, "x", (2,))).replace(plain.__qualname__, kept.__qualname__)
    with pytest.raises(dataclasses.FrozenInstanceError):
        a.span = 3
    assert dataclasses.replace(a, span=5).span == 5
    assert [f.name for f in dataclasses.fields(kept)] == ["span", "label", "tags"]
    assert kept.__init__.__code__.co_code == plain.__init__.__code__.co_code
    assert kept.__init__.__annotations__ == plain.__init__.__annotations__
    with pytest.raises(TypeError):
        kept()                                             # span is required


def test_the_file_is_read_back_and_not_rewritten_when_nothing_is_new(cache_home):
    with classcache.active():
        _make()
    written = classcache.cache_file().stat().st_mtime_ns
    classcache._state["codes"] = None                    # as in a fresh process
    with classcache.active():
        _make()
    assert classcache.cache_file().stat().st_mtime_ns == written
    assert classcache._state["used"] <= set(classcache._state["codes"])


def test_a_garbled_file_is_ignored_and_replaced(cache_home):
    target = classcache.cache_file()
    target.parent.mkdir(parents=True)
    target.write_bytes(b"not marshal data")
    with classcache.active():
        Point = _make()
    assert Point(1) == Point(1)
    assert isinstance(classcache._read(), dict) and classcache._read()


def test_an_unwritable_cache_folder_changes_nothing(monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", "/dev/null/nowhere")
    monkeypatch.setitem(classcache._state, "codes", None)
    with classcache.active():
        Point = _make()
    assert Point(1, "b") == Point(1, "b")


def test_a_fresh_process_runs_a_statement_from_the_kept_file(tmp_path):
    code = ("import permq\n[r] = permq.run('compare [1.2, 3.4, 2.2, 5.1] vs [4.1, 5.0, 3.3, 6.2]')\n"
            "import json; print(json.dumps(r.to_dict()['p_value']))")
    env = {"XDG_CACHE_HOME": str(tmp_path), "PATH": "/usr/bin:/bin"}
    runs = [subprocess.run([sys.executable, "-c", code], cwd=ROOT, env=env, capture_output=True,
                           text=True, timeout=120) for _ in range(2)]
    assert all(r.returncode == 0 for r in runs), runs[0].stderr + runs[1].stderr
    assert json.loads(runs[0].stdout) == json.loads(runs[1].stdout) == pytest.approx(0.2)
    assert any(tmp_path.glob("permq/dataclass-methods.*"))
