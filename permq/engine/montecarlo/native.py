"""The C loops of loops.c: built when permq is installed, loaded here with ctypes.

`pip install .` builds the library into the wheel (hatch_build.py calls `build`); an editable
install builds it into the source tree. Loading takes about a millisecond and needs neither a
compiler nor a writable folder, so the first Monte Carlo statement of a fresh process runs at
full speed. In a source checkout (loops.c beside this file) a library built from another
version of loops.c is rebuilt, or left unused. Where there is no library, `library()` is None
and the compiled loops come from numba, or the numpy path gives the same numbers.

This module uses the standard library only: the build hook loads it by its path.
"""
from __future__ import annotations

import ctypes
import os
import sys
import threading
import zlib
from pathlib import Path
from typing import Optional

HERE = Path(__file__).resolve().parent
SOURCE = HERE / "loops.c"
LIBRARY = HERE / ("_loops.dll" if sys.platform == "win32" else "_loops.so")

_P = ctypes.c_void_p
_I = ctypes.c_int64
SIGNATURES = {
    "permq_subset_sums": (_P, _I, _I, _P, _I, _I, _P, _P),
    "permq_shuffled_dots": (_P, _P, _I, _P, _I, _I, _P),
    "permq_flip_sums": (_P, _P, _I, _P, _I, _I, _P, _P, _P),
    "permq_group_sums": (_P, _I, _P, _I, _P, _I, _I, _P),
    "permq_kendall_s": (_P, _P, _P, _I, _I, _I, _P, _I, _I, _P),
}
# built where the compiler has 128-bit integers (numpy's PCG64 stepped inside the loop)
OPTIONAL = {
    "permq_pcg64_raw": (_P, _I, _P),
    "permq_subset_sums_pcg": (_P, _I, _I, _P, _I, _P, _P),
    "permq_subset_sums_pcg_int": (_P, _I, _I, _I, _P, _I, _P, _P),
}


def source_crc(source: Path = SOURCE) -> int:
    return zlib.crc32(source.read_bytes()) & 0xFFFFFFFF


def compiler() -> Optional[list]:
    """The C compiler command (CC, else the one Python was built with, else cc / gcc / clang)."""
    import shutil
    import sysconfig

    for cand in (os.environ.get("CC"), sysconfig.get_config_var("CC"), "cc", "gcc", "clang"):
        if not cand:
            continue
        words = cand.split()
        if shutil.which(words[0]):
            return words
    return None


def build(target: Path, source: Path = SOURCE) -> bool:
    """Compile `source` into the shared library `target`; False (and nothing written) when
    there is no compiler or it fails. Writes a temporary file first, so that processes
    building at the same time never load a half-written library."""
    import subprocess
    import tempfile

    cc = compiler()
    if cc is None or sys.platform == "win32":
        return False
    target = Path(target)
    fd, tmp = tempfile.mkstemp(suffix=".so", dir=target.parent)
    os.close(fd)
    cmd = cc + ["-O2", "-shared", "-fPIC", "-ffp-contract=off", "-fno-fast-math",
                f"-DPERMQ_SOURCE_CRC={source_crc(source)}u", "-o", tmp, str(source)]
    try:
        done = subprocess.run(cmd, capture_output=True, text=True, timeout=120)
        if done.returncode != 0:
            return False
        os.replace(tmp, target)
        return True
    except (OSError, subprocess.SubprocessError):
        return False
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def _load(path: Path):
    try:
        lib = ctypes.CDLL(str(path))
    except OSError:
        return None
    for name, args in SIGNATURES.items():
        fn = getattr(lib, name, None)
        if fn is None:
            return None
        fn.argtypes = args
        fn.restype = ctypes.c_int
    for name, args in OPTIONAL.items():
        fn = getattr(lib, name, None)
        if fn is not None:
            fn.argtypes = args
            fn.restype = ctypes.c_int
    lib.permq_source_crc.restype = ctypes.c_uint32
    return lib


def _current(lib) -> bool:
    """Built from the loops.c beside it (an installed wheel carries no source: trusted)."""
    return not SOURCE.exists() or lib.permq_source_crc() == source_crc()


_LOCK = threading.Lock()
_FOUND: list = []


def library():
    """The loaded library, or None (then numba or the numpy path run the same loops). Found
    once per process; the worker threads of a first Monte Carlo statement wait for it."""
    if _FOUND:
        return _FOUND[0]
    with _LOCK:
        if not _FOUND:
            _FOUND.append(_find())
    return _FOUND[0]


def _find():
    if os.environ.get("PERMQ_NO_C_LOOPS"):
        return None
    lib = _load(LIBRARY) if LIBRARY.exists() else None
    if lib is not None and _current(lib):
        return lib
    # a source checkout without a current library: build it beside the source, once
    if SOURCE.exists() and os.access(HERE, os.W_OK):
        fresh = HERE / f"_loops_{os.getpid()}_{threading.get_ident()}.so"
        try:
            if build(fresh):
                lib = _load(fresh)      # loaded under its own name; then put in place
                os.replace(fresh, LIBRARY)
                if lib is not None and _current(lib):
                    return lib
        finally:
            if fresh.exists():
                fresh.unlink()
    return None
