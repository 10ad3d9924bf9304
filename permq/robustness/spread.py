"""A pointer to the tests that allow for unequal spread, when a two-group result shows it.

Two groups whose standard deviations differ by a factor of SPREAD_RATIO or more (a rule of
thumb: variances four-fold apart; common practice) make the plain permutation tests answer
"same distribution?" rather than "same mean?", and their p-values can mislead about a
difference in location. The note names `using welch` (a difference in means) and
`using brunner-munzel` (ranks: P(A > B) + 1/2 P(A = B)).
"""
from __future__ import annotations

SPREAD_RATIO = 2.0
STUDENTIZED = ("welch", "brunner-munzel")


def note(kind: str, family: str, ratio) -> str:
    """The sentence to add, or '' when none is due."""
    if kind != "two-sample" or family in STUDENTIZED or ratio is None or ratio < SPREAD_RATIO:
        return ""
    other = "brunner-munzel" if family in ("ranks", "normal-scores", "medians") else "welch"
    return (f"the groups' spreads differ (sd ratio {ratio:.3g}): for a difference in location "
            f"that allows for it, 'using {other}'" +
            (" (or 'using brunner-munzel' for ranks)" if other == "welch" else
             " (or 'using welch' for means)"))
