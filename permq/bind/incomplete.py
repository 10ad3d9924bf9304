"""Blocks that lack a level (`within BLOCK` with three or more levels, a lost plot, a dropout).

A design of three or more levels within blocks is complete when every block holds every level
once (Friedman, Page, the F within blocks of bind/groups.py). It is incomplete when each block
holds each level at most once and some block lacks one: the within-block permutation then
runs over the levels present (engine/incomplete). What still cannot be analysed within blocks
is refused here, in the user's names:

- a level more than once in a block (the complete-block message of bind/groups.py);
- ordered levels (Page's test needs complete blocks; the same message);
- no block with two or more plots, or blocks that do not connect the levels (two sets of
  levels that never meet in a block cannot be compared within blocks).
"""
from __future__ import annotations

import numpy as np

from ..errors import BindError


def pattern(codes, block_codes, k: int) -> str:
    """"complete", "incomplete" (each level at most once a block, some missing) or "repeated"."""
    counts = np.zeros((int(block_codes.max()) + 1, k), dtype=np.int64)
    np.add.at(counts, (block_codes, codes), 1)
    if np.all(counts == 1):
        return "complete"
    return "repeated" if np.any(counts > 1) else "incomplete"


def check(codes, block_codes, levels, block_labels, within_name) -> tuple:
    """Refuse what an incomplete-block analysis cannot take; the notes it gives otherwise."""
    k = len(levels)
    sizes = np.bincount(block_codes, minlength=len(block_labels))
    single = [block_labels[b] for b in np.flatnonzero(sizes == 1)]
    if np.all(sizes < 2):
        raise BindError(f"no block of '{within_name.text}' holds two or more of the levels: "
                        "there is no comparison within blocks", within_name.span,
                        hint="choose two levels (levels \"A\", \"B\") for a stratified "
                             "comparison, or compare without 'within'")
    parts = _connected(codes, block_codes, k, sizes)
    if len(parts) > 1:
        apart = " | ".join(", ".join(f"'{levels[j]}'" for j in part) for part in parts)
        raise BindError(f"the blocks of '{within_name.text}' do not connect the levels: "
                        f"{apart} never meet within a block, so they cannot be compared "
                        "within blocks", within_name.span)
    missing = int(len(block_labels) * k - len(codes))
    notes = [f"incomplete blocks: {missing} of {len(block_labels) * k} block-level cells are "
             f"empty; levels are permuted within each block among the levels it holds"]
    if single:
        shown = ", ".join(f"'{b}'" for b in single[:5]) + (" ..." if len(single) > 5 else "")
        notes.append(f"block{'s' if len(single) > 1 else ''} {shown} of '{within_name.text}' "
                     "hold one plot: no comparison within them, so they are left out")
    return tuple(notes)


def _connected(codes, block_codes, k, sizes) -> list:
    """The sets of levels linked by sharing blocks of two or more plots (union-find)."""
    parent = list(range(k))

    def root(j):
        while parent[j] != j:
            parent[j] = parent[parent[j]]
            j = parent[j]
        return j

    seen = set()
    for b in np.flatnonzero(sizes >= 2):
        present = np.unique(codes[block_codes == b])
        seen.update(int(j) for j in present)
        for j in present[1:]:
            parent[root(int(j))] = root(int(present[0]))
    groups: dict = {}
    for j in range(k):
        groups.setdefault(root(j), []).append(j)
    return sorted(groups.values(), key=lambda part: part[0])
