"""The panel of error laws a design is tried under.

Every shape law is standardised to mean 0 and variance 1, so that a shift "in standard
deviations" means the same thing under each law and the errors differ only in shape:

- normal: the textbook assumption;
- t, 3 df: heavy tails (variance 3 before standardising);
- lognormal: exp(Z), sigma 1, strongly right-skewed (skewness about 6.2);
- exponential: right-skewed (skewness 2);
- contaminated normal: 95% N(0, 1) and 5% from a normal five times as wide (a few outliers;
  the mixture model is common practice in robustness studies);

two laws that change the spread rather than the shape (normal errors, variance 1 on
average over the units):

- unequal spread between groups: the largest spread is three times the smallest, and it goes
  with the smallest group (ties: the later level), the case that hurts tests that pool;
- spread growing with x (slopes): the error sd rises linearly from 1 to 3 across the range of x;

and one law that makes the errors dependent, for designs whose randomised unit may be a group
of rows (groups and slopes):

- clustered errors: normal errors, rows of a cluster sharing a normal effect, intraclass
  correlation CLUSTER_ICC (variance CLUSTER_ICC shared, 1 - CLUSTER_ICC the row's own). With
  `units COLUMN` the clusters are the named units, and each unit's mean is what is tested:
  sqrt(rho) z + sqrt((1 - rho) / m) w for a unit of m rows, scaled to variance 1 on average;
  whole units are permuted, so the test stays exact (for units of equal size). Without
  `units`, the rows of each group (or the rows in order of x) are taken in clusters of
  CLUSTER_ROWS, a litter or a tray the design does not know about: rows are then not
  exchangeable, and permuting them is not exact (it rejects too often).

For one sample against a value the errors are centred so that the parameter the family
tests is zero: the mean (means), the pseudo-median, i.e. the median of (e1 + e2) / 2 (ranks),
the median (signs).
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Callable, Optional

import numpy as np
from ..lazy import integrate, optimize, stats

SPREAD_RATIO = 3.0
CONTAMINATION = 0.05
CONTAMINATION_WIDTH = 5.0
_LOGNORMAL_MEAN = float(np.exp(0.5))
_LOGNORMAL_SD = float(np.sqrt((np.e - 1.0) * np.e))
_CONTAMINATED_SD = float(np.sqrt(1 - CONTAMINATION + CONTAMINATION * CONTAMINATION_WIDTH ** 2))


def _normal(rng, shape):
    return rng.standard_normal(shape)


def _t3(rng, shape):
    return rng.standard_t(3, shape) / np.sqrt(3.0)


def _lognormal(rng, shape):
    return (np.exp(rng.standard_normal(shape)) - _LOGNORMAL_MEAN) / _LOGNORMAL_SD


def _exponential(rng, shape):
    return rng.standard_exponential(shape) - 1.0


def _contaminated(rng, shape):
    z = rng.standard_normal(shape)
    wide = rng.random(shape) < CONTAMINATION
    return np.where(wide, CONTAMINATION_WIDTH * z, z) / _CONTAMINATED_SD


@dataclass(frozen=True)
class ErrorLaw:
    key: str
    name: str                       # short, for the table
    words: str                      # one line, for the report
    draw: Callable                  # (rng, shape) -> standardised errors
    symmetric: bool = True
    spread: str = ""                # "" (same law everywhere), "groups" or "x"

    def errors(self, rng, size: int, factors: np.ndarray) -> np.ndarray:
        """(size, N) errors; `factors` are the per-unit spreads (ones for shape laws)."""
        return self.draw(rng, (size, len(factors))) * factors


NORMAL = ErrorLaw("normal", "normal", "normal errors", _normal)
T3 = ErrorLaw("t3", "t (3 df)", "Student t with 3 df (heavy tails)", _t3)
LOGNORMAL = ErrorLaw("lognormal", "lognormal", "lognormal, sigma 1 (strongly right-skewed)",
                     _lognormal, symmetric=False)
EXPONENTIAL = ErrorLaw("exponential", "exponential", "exponential (right-skewed)",
                       _exponential, symmetric=False)
CONTAMINATED = ErrorLaw("contaminated", "contaminated normal",
                        f"{CONTAMINATION:.0%} of errors from a normal "
                        f"{CONTAMINATION_WIDTH:g} times as wide (outliers)", _contaminated)
UNEQUAL = ErrorLaw("unequal-spread", "unequal spread",
                   f"normal errors, spread {SPREAD_RATIO:g} times larger in one group",
                   _normal, spread="groups")
GROWING = ErrorLaw("spread-with-x", "spread grows with x",
                   f"normal errors whose sd rises {SPREAD_RATIO:g}-fold across the range of x",
                   _normal, spread="x")

CLUSTER_ICC = 0.3
CLUSTER_ROWS = 4
CLUSTERED = ErrorLaw("clustered", "clustered errors",
                     f"normal errors shared by clusters of {CLUSTER_ROWS} rows of a group "
                     f"(intraclass correlation {CLUSTER_ICC:g}), units the design does not name",
                     _normal, spread="clusters")
CLUSTERED_UNITS = ErrorLaw("clustered", "clustered errors",
                           "normal errors shared by the rows of each unit (intraclass "
                           f"correlation {CLUSTER_ICC:g}); each unit's mean is tested",
                           _normal, spread="clusters")
CLUSTER_KINDS = ("two-sample", "k-sample", "ordered", "slope")

SHAPES = (NORMAL, T3, LOGNORMAL, EXPONENTIAL, CONTAMINATED)


def panel(kind: str) -> tuple:
    """The six laws for a design kind (slopes take growing spread, the rest unequal spread)."""
    return SHAPES + ((GROWING,) if kind == "slope" else (UNEQUAL,))


def panel_for(problem) -> tuple:
    """The design kind's panel, with clustered errors where the design has or may lack
    units, without the laws its family's check leaves out."""
    left = dict(problem.check.leaves_out) if problem.check is not None else {}
    laws = panel(problem.kind)
    if getattr(problem, "unit_sizes", None) is not None:
        laws += (CLUSTERED_UNITS,)
    elif getattr(problem, "clusters", None) is not None:
        laws += (CLUSTERED,)
    return tuple(law for law in laws if law.key not in left)


# ---------------------------------------------------------------- clusters

def row_clusters(codes: np.ndarray, x: Optional[np.ndarray] = None) -> np.ndarray:
    """Cluster of each row for a design without units: runs of CLUSTER_ROWS rows within each
    group (in their order), or, with x, runs of CLUSTER_ROWS rows in the order of x."""
    n = len(codes)
    order = np.argsort(x, kind="stable") if x is not None else np.argsort(codes, kind="stable")
    key = np.zeros(n, dtype=np.int64) if x is not None else np.asarray(codes)[order]
    out = np.empty(n, dtype=np.int64)
    label, run, previous = -1, 0, None
    for i, pos in enumerate(order):
        if key[i] != previous or run == CLUSTER_ROWS:
            label, run, previous = label + 1, 0, key[i]
        out[pos] = label
        run += 1
    return out


def clustered_errors(rng, size: int, clusters: Optional[np.ndarray],
                     unit_sizes: Optional[np.ndarray]) -> np.ndarray:
    """(size, N) clustered normal errors: per row with `clusters`, or per unit mean with
    `unit_sizes` (rows a unit), variance 1 on average."""
    rho = CLUSTER_ICC
    if unit_sizes is not None:
        m = np.asarray(unit_sizes, dtype=float)
        shared = rng.standard_normal((size, len(m)))
        own = rng.standard_normal((size, len(m)))
        e = np.sqrt(rho) * shared + np.sqrt((1 - rho) / m) * own
        return e / np.sqrt(np.mean(rho + (1 - rho) / m))
    shared = rng.standard_normal((size, int(clusters.max()) + 1))
    own = rng.standard_normal((size, len(clusters)))
    return np.sqrt(rho) * shared[:, clusters] + np.sqrt(1 - rho) * own


# ---------------------------------------------------------------- spreads

def _normalised(f: np.ndarray) -> np.ndarray:
    return f / np.sqrt(np.mean(f * f))


def group_factors(codes: np.ndarray) -> np.ndarray:
    """Per-unit spreads: 1 .. SPREAD_RATIO by group size, the smallest group the widest."""
    k = int(codes.max()) + 1
    sizes = np.bincount(codes, minlength=k)
    order = sorted(range(k), key=lambda g: (-sizes[g], g))   # largest group first
    sd = np.empty(k)
    for rank, g in enumerate(order):
        sd[g] = 1.0 + (SPREAD_RATIO - 1.0) * rank / (k - 1)
    return _normalised(sd[codes])


def unit_factors(n: int) -> np.ndarray:
    """One sample or pairs: the later half of the units SPREAD_RATIO times as wide."""
    f = np.ones(n)
    f[n // 2:] = SPREAD_RATIO
    return _normalised(f)


def x_factors(x: np.ndarray) -> np.ndarray:
    x = np.asarray(x, dtype=float)
    span = np.ptp(x)
    f = 1.0 + (SPREAD_RATIO - 1.0) * (x - x.min()) / (span if span > 0 else 1.0)
    return _normalised(f)


# ---------------------------------------------------------------- centres for one sample

def _pdf_cdf(law: ErrorLaw):
    if law is LOGNORMAL:
        d = stats.lognorm(1.0, loc=-_LOGNORMAL_MEAN / _LOGNORMAL_SD, scale=1.0 / _LOGNORMAL_SD)
    elif law is EXPONENTIAL:
        d = stats.expon(loc=-1.0)
    else:
        return None
    return d


@lru_cache(maxsize=None)
def centre(law_key: str, parameter: str) -> float:
    """The value to subtract so that the parameter a one-sample test is about ("mean",
    "median" or "pseudo-median": its check's `centre`) is zero under this law."""
    law = BY_KEY[law_key]
    if law.symmetric or parameter == "mean":
        return 0.0
    d = _pdf_cdf(law)
    if parameter == "median":
        return float(d.median())
    lo, hi = d.support()

    def below(m):   # P((e1 + e2) / 2 <= m) - 1/2
        val, _ = integrate.quad(lambda u: d.cdf(2 * m - u) * d.pdf(u), lo, min(hi, 2 * m - lo),
                                limit=200)
        return val - 0.5

    return float(optimize.brentq(below, lo + 1e-9, 5.0, xtol=1e-12))


BY_KEY = {law.key: law for law in SHAPES + (UNEQUAL, GROWING)}


def breaks_exactness(law: ErrorLaw, kind: str, centre: str, form: str = "",
                     unit_sizes: Optional[np.ndarray] = None) -> Optional[str]:
    """Why the permutation test is not exact under this law for this design, or None."""
    if law.spread == "clusters" and form != "residual":
        if unit_sizes is None:
            return ("rows of a cluster share an effect, so rows are not exchangeable; when whole "
                    "units were randomised, name them (units COLUMN) and whole units are "
                    "permuted")
        if np.ptp(unit_sizes) > 0:
            return "units of unequal size: their means have unequal spread under clustering"
        return None
    if form == "residual":
        also = "; spread growing with x breaks it further" if law.spread == "x" else ""
        return ("permuting residuals of the reduced model (adjusted slope) is approximate "
                "under every law" + also)
    if law.spread == "groups" and kind == "blocked":
        return "unequal spread breaks exchangeability of treatments within blocks"
    if law.spread == "groups" and kind in ("two-sample", "k-sample", "ordered", "control"):
        return "unequal spread breaks exchangeability between groups"
    if law.spread == "x":
        return "spread growing with x breaks exchangeability of y against x"
    if kind == "one-sample" and not law.symmetric and centre != "median":
        return "a skewed law is not symmetric about the tested value, as sign flips need"
    return None
