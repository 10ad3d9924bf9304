"""The compiled methods of permq's dataclasses, kept between runs as Python keeps a module's
bytecode in its .pyc file.

`dataclasses` writes each class's methods (__init__, __repr__, __eq__, __hash__, and
__setattr__ / __delattr__ for a frozen class) as source text and compiles that text every time
the module defining the class is imported: about a millisecond a class, and a start of permq
defines some ninety of them, a quarter of its start-up. While permq's own modules are imported
(`active()`), the text is looked up here instead: the key is the text itself, so the code run is
exactly the code `dataclasses` would have compiled, and a text not found is compiled as usual and
added. The file lives in the user's cache folder, one per Python version (code objects are
version-specific); a file that cannot be read or written is simply not used.
"""
from __future__ import annotations

import dataclasses
import marshal
import os
import sys
import threading
from contextlib import contextmanager
from pathlib import Path

MAX_ENTRIES = 4000          # beyond this the file keeps only the texts the last run used
_LOCK = threading.RLock()
_state = {"depth": 0, "codes": None, "used": set(), "changed": False, "before": None}


def cache_file() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "permq" / f"dataclass-methods.{sys.implementation.cache_tag}.marshal"


def _read() -> dict:
    try:
        codes = marshal.loads(cache_file().read_bytes())
    except (OSError, EOFError, ValueError, TypeError):
        return {}
    return codes if isinstance(codes, dict) else {}


def _write(codes: dict, used: set) -> None:
    if len(codes) > MAX_ENTRIES:
        codes = {k: v for k, v in codes.items() if k in used}
    import tempfile            # only when the file is written: not on every start

    target = cache_file()
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=".dataclass-methods-")
        with os.fdopen(fd, "wb") as out:
            out.write(marshal.dumps(codes))
        os.replace(tmp, target)          # readers never see a half-written file
    except (OSError, ValueError):
        try:
            os.unlink(tmp)
        except (OSError, UnboundLocalError):
            pass


def _exec(source, globals=None, locals=None):
    """`exec` as dataclasses calls it, with the compiled text looked up first."""
    if type(source) is str:
        codes = _state["codes"]
        code = codes.get(source)
        if code is None:
            code = compile(source, "<string>", "exec", dont_inherit=True)   # as exec(text) would
            codes[source] = code
            _state["changed"] = True
        _state["used"].add(source)
        source = code
    exec(source, globals, locals)


@contextmanager
def active():
    """Dataclasses defined inside (permq's modules, as they are imported) use the kept code."""
    with _LOCK:
        if _state["depth"] == 0:
            if _state["codes"] is None:
                _state["codes"] = _read()
            _state["before"] = dataclasses.__dict__.get("exec")    # (normally none)
            dataclasses.exec = _exec      # a module global shadows the builtin for dataclasses
        _state["depth"] += 1
    try:
        yield
    finally:
        with _LOCK:
            _state["depth"] -= 1
            if _state["depth"] == 0:
                if _state["before"] is None:
                    del dataclasses.exec
                else:
                    dataclasses.exec = _state["before"]
                if _state["changed"]:
                    _write(_state["codes"], _state["used"])
                    _state["changed"] = False
