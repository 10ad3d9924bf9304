"""numba's decorator for permq's loops: compiled once and kept in numba's cache where a folder
can be written (beside the package, else numba's folder in the user's cache), else compiled
in memory for the process. numba itself is imported by the modules that use this one, on
first use only."""
import numba


def njit(fn):
    try:
        return numba.njit(cache=True, nogil=True)(fn)
    except RuntimeError:        # "cannot cache function": no folder numba may write to
        return numba.njit(nogil=True)(fn)
