"""The short descriptions shown beside completions.

The words themselves come from the grammar (vocabulary.py); this module only says what they
are for. A word the grammar gains without a note here is still offered, with a plain note.
"""
from __future__ import annotations

from typing import Optional

ANALYSIS_VERBS = ("compare", "relate", "count")

KEYWORDS = {
    "robustness": "check the design by simulation",
    "power": "power and sample size by simulation",
    "n": "units a group (one number, or one a group)",
    "law": "error law of the simulated data",
    "margin": "equivalence (two-sided) or non-inferiority margin",
    "groups": "group sizes of a layout: groups 6, 6",
    "pairs": "number of pairs of a layout",
    "sample": "size of one sample",
    "proportions": "power count proportions 0.2 vs 0.6: two binomial samples, power summed",
    "proportion": "power count proportion 0.7 vs 0.5: one proportion (true vs tested)",
    "datasets": "number of simulated data sets",
    "shift": "effect to simulate",
    "sd": "in standard deviations",
    "significance": "level at which a test rejects",
    "picture": "write a picture to a file",
    "adjust": "adjust p-values for several tests",
    "pairwise": "every pair of levels",
    "each": "one analysis per level of a column",
    "every": "every numeric column as a response",
    "numeric": "numeric columns",
    "except": "columns to leave out",
    "top": "limit the listing to N",
    "below": "limit the listing by a threshold",
    "load": "read a table from a file",
    "use": "choose the table in use",
    "compare": "groups, paired columns, one sample",
    "relate": "association between two columns",
    "count": "contingency table or proportion",
    "explain": "show the plan and its cost; nothing runs",
    "set": "change a session default",
    "show": "list tables or settings",
    "describe": "the columns of a table",
    "help": "help pages",
    "save": "write what ran as a query file, or: save report \"x.html\"",
    "report": "an HTML report of what ran",
    "copy": "the last result's reporting sentence, to copy",
    "rows": "names for an inline table's rows",
    "columns": "names for an inline table's columns",
    "quit": "leave the shell",
    "exit": "leave the shell",
    "by": "group column follows",
    "vs": "second operand follows",
    "to": "second column follows",
    "of": "successes of trials",
    "as": "name for the table",
    "for": "covariate columns follow; for power 80%: the target",
    "using": "test family",
    "alternative": "direction of the test",
    "confidence": "level of the intervals",
    "exact": "insist on an exact method",
    "sampled": "Monte Carlo with N draws",
    "seed": "seed for Monte Carlo",
    "levels": "choose and order the levels",
    "within": "blocks or strata column",
    "units": "the randomised unit: its rows move together",
    "ordered": "ordered alternative (trend)",
    "scores": "scores of the ordered levels",
    "paired": "paired columns",
    "in": "take the columns from a table",
    "adjusting": "covariates (groups or a slope)",
    "against": "every other level against this control",
    "and": "a second factor, crossed with the first",
    "fresh": "a new seed on this run",
    "delimiter": "field separator of a text file",
    "decimal": "decimal mark: \".\" or \",\"",
    "sheet": "which sheet of a workbook",
}

VALUES = {
    "ALTERNATIVE": {
        "two-sided": "an effect in either direction",
        "higher": "the named effect is positive",
        "lower": "the named effect is negative",
    },
    "SETTING": {
        "seed": "seed for Monte Carlo",
        "confidence": "level of the intervals",
        "budget": "time allowed for exact work",
        "format": "text, json, csv or markdown",
        "alternative": "default direction",
        "workers": "threads for Monte Carlo",
    },
    "ADJUSTMENT": {
        "holm": "Holm's step-down (family-wise)",
        "fdr": "false discovery rate (Benjamini-Hochberg)",
        "max-t": "maximum statistic over the permutations",
        "min-p": "minimum p over the permutations",
        "none": "no adjustment",
    },
    "LAW": {"normal": "normal errors", "t3": "Student t, 3 df (heavy tails)",
            "lognormal": "lognormal (strongly right-skewed)",
            "exponential": "exponential (right-skewed)",
            "contaminated": "5% outliers from a normal 5 times as wide",
            "pilot": "the pilot's residuals, resampled"},
    "STEP": {"step-down": "step-down procedure", "single-step": "single-step procedure"},
    "SHOWABLE": {"tables": "the loaded tables", "settings": "the session defaults"},
    "EVENTS": {"events": "events in an exposure (a rate); or the event column of censored times",
               "event": "one event in an exposure; or the event column of censored times"},
}

EXAMPLES = {
    "PERCENT": [("95%", "level"), ("90%", "level"), ("99%", "level")],
    "DURATION": [("5s", "seconds"), ("30s", "seconds"), ("2min", "minutes")],
}


def keyword_note(word: str) -> str:
    return KEYWORDS.get(word, "keyword")


def value_note(terminal: str, word: str) -> str:
    if terminal == "FAMILY":
        return family_note(word)
    return VALUES.get(terminal, {}).get(word, terminal.lower().replace("_", " "))


def family_note(word: str) -> str:
    """A family's one-line summary, as its first declaration gives it."""
    from ...families import registry

    return next((f.summary for f in registry.families() if f.keyword == word and f.summary),
                "test family")


def examples(terminal: str) -> list[tuple[str, str]]:
    return list(EXAMPLES.get(terminal, []))


def families_for(verb: Optional[str]) -> set[str]:
    """The families the binder accepts for a verb (empty: no filter), from the registry."""
    from ...families import registry

    return set(registry.for_verb(verb)) if verb else set()


def family_known(word: str) -> bool:
    """Whether any verb claims the family (an unclaimed one is offered everywhere)."""
    return any(word in families_for(v) for v in ("compare", "relate", "count"))


def setting_values(setting: str) -> list[tuple[str, str]]:
    from . import vocabulary as vocab

    if setting == "alternative":
        words = vocab.value_sets().get("ALTERNATIVE", ())
        return [(w, value_note("ALTERNATIVE", w)) for w in words]
    if setting == "format":
        from ...statements import FORMATS

        return [(f, "output format") for f in FORMATS]
    return []


def column_note(series, table: str) -> str:
    import pandas as pd

    missing = int(series.isna().sum())
    miss = f" · {missing} missing" if missing else ""
    if pd.api.types.is_numeric_dtype(series) and not pd.api.types.is_bool_dtype(series):
        return f"number column of {table}{miss}"
    return f"text column of {table} · {series.nunique()} levels{miss}"
