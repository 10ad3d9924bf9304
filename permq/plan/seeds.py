"""The Monte Carlo seed of a statement, decided once, before the statement is planned.

- `seed 7` in the statement, or `set seed 7` before it: that seed.
- `seed fresh` in the statement, or `set seed fresh` before it: a new seed on every run.
- otherwise (the default) a seed derived from the statement's own text, so that a query file
  gives the same numbers on every run. The text is canonicalised first: comments,
  line continuations and the amount of space between words do not change the seed; the words,
  numbers, quoted names and strings as written do (`1.0` and `1` are different text).

The data do not enter the seed. A query file is the record of an analysis plan, fixed before
the data are seen; with the same seed a corrected value changes the p-value by the data's own
effect only, not by fresh Monte Carlo noise on top (the same random arrangements are reused).
Two statements with the same text share a seed, and so give the same draws.
"""
from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass

from ..engine.montecarlo.sampling import fresh_seed

FRESH = "fresh"              # `seed fresh`, `set seed fresh`
FROM_STATEMENT = None        # the default: derived from the statement's text

# strings and quoted names first (their inner spaces count), then comments (dropped),
# brackets and separators (a token each), then every other run of non-space characters
_TOKEN = re.compile(r'"[^"\n]*"|\'[^\'\n]*\'|`[^`\n]+`|#[^\n]*|[\[\](),;<]|[^\s\[\](),;<"\'`#]+')
_STRING_OR_COMMENT = re.compile(r'"[^"\n]*"|\'[^\'\n]*\'|`[^`\n]+`|#[^\n]*')
_LEADING = ("explain",)      # `explain S` plans with the seed S would run with


@dataclass(frozen=True)
class SeedChoice:
    seed: int
    source: str              # "given", "statement" or "fresh"


def canonical(text: str) -> str:
    """The statement's text with comments, continuations and spacing taken out."""
    tokens = [t for t in _TOKEN.findall(text.replace("\\\n", " ")) if not t.startswith("#")]
    while tokens and tokens[0] in _LEADING:
        tokens = tokens[1:]
    return " ".join(tokens)


def pinned(text: str, seed: int) -> str:
    """The statement on one line with its seed written out (`seed fresh` replaced), comments
    taken out so that nothing after them is lost: what `save` keeps, so a replay matches.
    Quoted strings and names are kept as written."""
    line, given, at = "", False, 0
    source = text.replace("\\\n", " ")
    for m in list(_STRING_OR_COMMENT.finditer(source)) + [None]:
        outside = re.sub(r"\s+", " ", source[at:m.start() if m else len(source)])
        outside = re.sub(r" ?\bseed fresh\b", "", outside)
        given = given or bool(re.search(r"\bseed \d+", outside))
        line += outside[1:] if line.endswith(" ") and outside.startswith(" ") else outside
        if m is not None:
            line += "" if m.group(0).startswith("#") else m.group(0)
            at = m.end()
    line = line.strip()
    return line if given else f"{line} seed {seed}"


def derived_seed(text: str) -> int:
    """A seed in 1 .. 2^31 - 1 from the SHA-256 of the canonical text (stable across
    machines, Python versions and runs)."""
    digest = hashlib.sha256(canonical(text).encode("utf-8")).digest()
    return int.from_bytes(digest[:8], "big") % (2 ** 31 - 1) + 1


def choose(text: str, option, default) -> SeedChoice:
    """The seed for one statement: `option` is the statement's own `seed` value (an int,
    FRESH, or None when it has none); `default` is the session's (`set seed`)."""
    wanted = option if option is not None else default
    if wanted == FRESH:
        return SeedChoice(fresh_seed(), "fresh")
    if wanted is FROM_STATEMENT:
        return SeedChoice(derived_seed(text), "statement")
    return SeedChoice(int(wanted), "given")


def setting_words(seed) -> str:
    """The session's seed setting (`set seed`) in words, for `show settings` and the toolbar."""
    if seed == FRESH:
        return "fresh each run"
    return "from each statement" if seed is FROM_STATEMENT else str(seed)
