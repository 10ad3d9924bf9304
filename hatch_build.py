"""Build hook: compile permq's C Monte Carlo loops (permq/engine/montecarlo/loops.c) into the
wheel, or into the source tree for an editable install. Without a C compiler the wheel is
built all the same, and permq runs those loops with numba (or numpy) instead."""
from __future__ import annotations

import importlib.util
import tempfile
from pathlib import Path

from hatchling.builders.hooks.plugin.interface import BuildHookInterface

ROOT = Path(__file__).resolve().parent
NATIVE = ROOT / "permq" / "engine" / "montecarlo" / "native.py"
IN_WHEEL = "permq/engine/montecarlo/_loops.so"


def _native():
    spec = importlib.util.spec_from_file_location("_permq_native_build", NATIVE)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


class CompiledLoops(BuildHookInterface):
    PLUGIN_NAME = "custom"

    def initialize(self, version, build_data):
        if self.target_name != "wheel":
            return
        native = _native()
        if version == "editable":
            if not native.build(native.LIBRARY):
                self.app.display_warning("permq: no C compiler; Monte Carlo loops use numba")
            return
        out = Path(tempfile.mkdtemp(prefix="permq-loops-")) / "_loops.so"
        if native.build(out):
            build_data["force_include"][str(out)] = IN_WHEEL
            build_data["pure_python"] = False
            build_data["infer_tag"] = True
        else:
            self.app.display_warning("permq: no C compiler; Monte Carlo loops use numba")
