"""A pointer to the tests that allow for unequal spread, when a two-group result shows it.

Two groups whose standard deviations differ by a factor of SPREAD_RATIO or more (a rule of
thumb: variances four-fold apart; common practice) make the plain permutation tests answer
"same distribution?" rather than "same mean?", and their p-values can mislead about a
difference in location. The note names the test the family declares for it (its
`unequal_spread_test`: `welch` for a difference in means, `brunner-munzel` for ranks,
P(A > B) + 1/2 P(A = B)); a family that declares none (the studentized tests themselves)
gets no note.
"""
from __future__ import annotations

SPREAD_RATIO = 2.0


def unequal_spread_test(design) -> str:
    """The `using` word the design's family points to under unequal spread ('' for none)."""
    from ..families.registry import find

    s = design.settings
    family = find(s.kind, s.family)
    return "" if family is None else family.extra.get("unequal_spread_test", "")


def note(other: str, ratio) -> str:
    """The sentence to add, or '' when none is due (`other`: the test to point to)."""
    if not other or ratio is None or ratio < SPREAD_RATIO:
        return ""
    return (f"the groups' spreads differ (sd ratio {ratio:.3g}): for a difference in location "
            f"that allows for it, 'using {other}'" +
            (" (or 'using brunner-munzel' for ranks)" if other == "welch" else
             " (or 'using welch' for means)"))
