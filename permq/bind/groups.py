"""Binding of three or more groups, ordered groups and blocked designs.

- three or more levels: k-sample tests (means: permutation F; ranks: Kruskal-Wallis;
  normal-scores; medians);
- `ordered`: an ordered alternative (means: linear trend in dose scores; ranks:
  Jonckheere-Terpstra); the order comes from `ordered "low" < "mid" < "high"`, from `levels`,
  or from a numeric group column; dose scores are the numeric levels, else 1, 2, ...;
- `within BLOCK`: two levels give stratified two-sample tests (means, ranks); three or more
  levels in complete blocks give Friedman (ranks), the permutation F within blocks (means) and,
  with `ordered`, Page's test (ranks).
"""
from __future__ import annotations

import numpy as np

from ..errors import BindError
from .common import all_numbers as _all_numbers, listed_numbers as _listed
from .designs import GroupsDesign



def bind_groups(node, subject, opts, defaults, y, g, levels, blocks, warnings, table):
    from .common import settings_for, level_text

    ordered = "ordered" in opts
    if ordered and (opts["ordered"].value or "levels" not in opts):
        levels = _ordered_levels(opts["ordered"], levels, g, subject, table)
        keep = g.isin(levels)
        y, g = y[keep], g[keep]
        if blocks is not None:
            blocks = blocks[keep]
    within = blocks is not None
    if within:
        form, kind = "blocked designs", "blocked"
        registry_kind = ("stratified" if len(levels) == 2 else
                         "ordered-blocked" if ordered else "blocked")
    elif ordered:
        form, kind = "ordered groups", "ordered"
        registry_kind = kind
    else:
        form, kind = "three or more groups", "k-sample"
        registry_kind = kind
    allowed = ("levels", "within", "ordered", "scores")
    s = settings_for(node, opts, defaults, registry_kind, form, allowed)
    if not ordered and len(levels) > 2 and s.alternative != "two-sided":
        raise BindError(f"a comparison of {len(levels)} groups has no direction",
                        opts["alternative"].span if "alternative" in opts else node.span,
                        hint="drop 'alternative', or add 'ordered' for a trend")
    if within and ordered and len(levels) == 2:
        # a rise along the order is the later level above the earlier one: the stratified
        # comparison of the later level minus the earlier ('higher' means a rise)
        warnings += (f"two ordered levels within blocks: the stratified comparison of "
                     f"{levels[1]} - {levels[0]} (a rise along {levels[0]} < {levels[1]})",)
        levels = levels[::-1]
    codes = np.array([levels.index(v) for v in g], dtype=np.int64)
    block_codes, block_labels = None, ()
    if within:
        block_text = blocks.map(level_text)
        block_labels = tuple(sorted(block_text.unique(), key=_natural))
        block_codes = np.array([block_labels.index(b) for b in block_text], dtype=np.int64)
    if within and len(levels) > 2:
        _check_complete(codes, block_codes, levels, block_labels, opts["within"].value)
    scores = None
    if ordered:
        listed = bool(opts["ordered"].value) or "levels" in opts
        scores, how = _dose_scores(levels, listed, table.frame[subject.group.text])
        scores, how = _given_scores(opts, scores, how, within)
        if not within:
            warnings += (f"dose scores: {_listed(scores)} ({how})",)
    elif "scores" in opts:
        raise BindError("'scores' go with 'ordered'", opts["scores"].span, hint="add 'ordered'")
    if len(levels) == 2 and not within and ordered:
        warnings += ("two ordered levels: the trend test is the two-sample test",)
    return GroupsDesign(y.to_numpy(float), codes, tuple(levels), subject.response.text, s,
                        block_codes, block_labels, ordered, scores, warnings, kind)


def bind_inline_groups(node, opts, defaults, samples, labels, warnings):
    from .common import settings_for

    ordered = "ordered" in opts
    if "ordered" in opts and opts["ordered"].value:
        raise BindError("inline samples are ordered as written; write just 'ordered'",
                        opts["ordered"].span)
    s = settings_for(node, opts, defaults, "ordered" if ordered else "k-sample",
                     "ordered samples" if ordered else "three or more samples", ("ordered", "scores"))
    if not ordered and s.alternative != "two-sided":
        raise BindError(f"a comparison of {len(samples)} samples has no direction",
                        opts["alternative"].span, hint="drop 'alternative', or add 'ordered'")
    values = np.concatenate(samples)
    codes = np.concatenate([np.full(len(a), i) for i, a in enumerate(samples)])
    scores = None
    if ordered:
        scores, how = _given_scores(opts, np.arange(1.0, len(samples) + 1),
                                    "1..k in the order written", False)
        warnings = tuple(warnings) + (f"dose scores: {_listed(scores)} ({how})",)
    elif "scores" in opts:
        raise BindError("'scores' go with 'ordered'", opts["scores"].span, hint="add 'ordered'")
    return GroupsDesign(values, codes.astype(np.int64), tuple(labels), "values", s,
                        None, (), ordered, scores, warnings,
                        "ordered" if ordered else "k-sample")


def _check_complete(codes, block_codes, levels, block_labels, within_name):
    """Friedman, Page and the within-block F need each level exactly once in every block."""
    k = len(levels)
    for b, label in enumerate(block_labels):
        counts = np.bincount(codes[block_codes == b], minlength=k)
        if np.all(counts == 1):
            continue
        missing = [levels[i] for i in range(k) if counts[i] == 0]
        extra = [levels[i] for i in range(k) if counts[i] > 1]
        what = []
        if missing:
            what.append("no " + ", ".join(f"'{m}'" for m in missing))
        if extra:
            what.append("more than one " + ", ".join(f"'{e}'" for e in extra))
        raise BindError(f"block '{label}' of '{within_name.text}' has {' and '.join(what)}: "
                        f"a comparison of {k} levels within blocks needs each level exactly once "
                        "in every block (complete blocks)", within_name.span,
                        hint="choose two levels (levels \"A\", \"B\") for a stratified comparison "
                             "that takes blocks of any size")


def _ordered_levels(opt, levels, g, subject, table):
    from .common import chosen_levels

    if opt.value:
        return chosen_levels(opt, list(g.unique()), subject.group.text)
    import pandas as pd

    column = table.frame[subject.group.text]
    numeric = pd.api.types.is_numeric_dtype(column)
    if not numeric and not _all_numbers(levels):
        raise BindError(f"'ordered' needs the order of the levels of '{subject.group.text}'",
                        opt.span, hint="write: ordered " + " < ".join(f'"{v}"' for v in levels))
    return sorted(levels, key=float)


def _dose_scores(levels, listed: bool, column):
    """(scores, in words): a numeric group column's levels score their values (in whatever
    order they are listed); listed text levels score 1..k."""
    import pandas as pd

    if pd.api.types.is_numeric_dtype(column) and _all_numbers(levels):
        return np.array([float(v) for v in levels]), "the levels' values"
    return (np.arange(1, len(levels) + 1, dtype=float),
            "1..k in the order listed" if listed else "1..k in order")


def _given_scores(opts, scores, how, within):
    """`scores 0, 10, 20, 40` in place of the default dose scores, checked."""
    if "scores" not in opts:
        return scores, how
    opt = opts["scores"]
    if within:
        raise BindError("Page's test within blocks takes no dose scores", opt.span,
                        hint="drop 'scores'")
    given = np.array([v for v, _ in opt.value], float)
    if given.size != scores.size:
        raise BindError(f"{given.size} scores for {scores.size} ordered levels", opt.span,
                        hint=f"give {scores.size} scores, one a level, in order")
    if not np.all(np.isfinite(given)) or np.ptp(given) == 0:
        raise BindError("the scores must be finite numbers, not all equal", opt.span)
    return given, "as given"


def _natural(text):
    from ..data.order import natural_key

    return natural_key(text)
