"""Heavy libraries loaded on first use, so that starting permq waits only for what a statement
needs: a trivial statement never loads scipy.stats or pandas, the shell shows its prompt before
any of them.

    from ..lazy import stats          # scipy.stats, loaded at the first `stats.<name>`
    from ..lazy import pandas as pd
    gammaln = lazy.function("scipy.special", "gammaln")
    ksample = lazy.module("permq.engine.ksample")   # a family's engine, when it first runs

Each attribute is fetched from the real module once and then kept on the stand-in, so a
loaded module costs one dictionary look-up per use, as the module itself would.
"""
from __future__ import annotations

import importlib

from .classcache import active as _kept_classes


class LazyModule:
    """Stands in for a module until one of its attributes is asked for."""

    def __init__(self, name: str):
        self.__dict__["_lazy_name"] = name

    def __getattr__(self, attr: str):
        if attr.startswith("__") and attr.endswith("__"):
            raise AttributeError(attr)           # copy, pickle and inspect probe these
        value = getattr(_import(self._lazy_name), attr)
        self.__dict__[attr] = value
        return value

    def __repr__(self) -> str:
        return f"<module {self._lazy_name!r}, loaded on first use>"


def _import(name: str):
    if name.split(".")[0] != "permq":
        return importlib.import_module(name)
    with _kept_classes():          # permq's own dataclasses: their methods kept compiled
        return importlib.import_module(name)


def module(name: str) -> LazyModule:
    """A module (one of permq's engines, say) loaded at the first use of one of its names."""
    return LazyModule(name)


def function(module: str, name: str):
    """A function of `module` (scipy.special.gammaln, ...) that loads the module on first call."""
    found = []

    def call(*args, **kwargs):
        if not found:
            found.append(getattr(_import(module), name))
        return found[0](*args, **kwargs)

    call.__name__ = call.__qualname__ = name
    call.__doc__ = f"{module}.{name}, loaded on first use"
    return call


stats = LazyModule("scipy.stats")
special = LazyModule("scipy.special")
optimize = LazyModule("scipy.optimize")
integrate = LazyModule("scipy.integrate")
pandas = LazyModule("pandas")

gammaln = function("scipy.special", "gammaln")
xlogy = function("scipy.special", "xlogy")
logsumexp = function("scipy.special", "logsumexp")
brentq = function("scipy.optimize", "brentq")
