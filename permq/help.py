"""`help` and `help TOPIC`: short pages with examples that run on the demo."""
from __future__ import annotations

TOPICS = {
    "compare": """compare: two groups, paired data, one sample
  compare mass by recipe                      two levels of a group column
  compare mass by recipe levels "B", "A"      choose and order the levels (effect B - A)
  compare after vs before paired              paired columns (effect after - before)
  compare mass vs 12.5                        one sample against a value
  compare [4.1, 5.3, 4.8] vs [6.0, 5.9, 7.2]  inline samples
  compare after vs before paired margin 0.5   equivalence: two one-sided exact tests at -0.5, +0.5
  ... margin 0.5 alternative higher           non-inferiority (the lower margin only)
options: using FAMILY, alternative higher|lower|two-sided, confidence 90%, exact,
         sampled N, seed N, in TABLE, margin M""",
    "groups": """three or more groups, ordered groups, blocks (try them on the demo's trays and plots)
  compare mass by recipe                              k-sample (means: F; ranks: Kruskal-Wallis)
  compare mass by recipe ordered "B" < "A" < "C"      ordered: linear trend (means), Jonckheere-Terpstra (ranks)
  compare yield by dose within block using ranks      complete blocks: Friedman; 'ordered': Page
  compare mass by recipe levels "A", "B" within bench  two levels, blocks of any size: stratified
  compare yield by variety and fertiliser             two crossed factors (help factors)
  compare yield by fertiliser adjusting for nitrate   a covariate in the statistic (help factors)
  compare weight by dose units litter                 whole litters randomised (help units)
  compare yield by variety within block in varieties  blocks lacking a level (help units)""",
    "units": """the randomised unit, and blocks that lack a level (try them on the demo's litters, varieties)
  compare weight by dose units litter                 litters randomised: whole litters moved, a litter's mean one value
  compare weight by dose ordered units litter         a trend over doses; also levels "0", "10" and using ranks
  compare weight by dose against "0" units litter    each dose against the control (also ordered against)
  relate weight to dose units litter                  association, whole units moved
  count dead by dose units litter                     (your two-valued column) each unit's proportion of events
  compare yield by variety within block in varieties  a lost plot: the F within blocks, levels permuted among those present
  compare yield by variety within block using ranks in varieties   Skillings-Mack (using durbin: Durbin's test)
a unit takes one level on all its rows (else the unit is named); the output gives units and rows;
the reference set, estimate and interval are those of the units""",
    "factors": """two crossed factors, and groups adjusted for covariates (try them on the demo's beans)
  compare yield by variety and fertiliser             each main effect and the interaction, the two-way F beside each
      main effects: the values permuted within the levels of the other factor (exact by listing)
      interaction: residuals of the additive model permuted (Freedman-Lane, Monte Carlo)
  compare yield by fertiliser adjusting for nitrate   groups permuted over the residuals of yield on nitrate:
      exact (Rosenbaum 2002); the adjusted difference with its exact interval; ANCOVA beside it
  compare yield by variety adjusting for nitrate      three or more groups: F of the residuals
  ... using ranks                                     Wilcoxon / Kruskal-Wallis of the residuals
text covariates (block, sex ...) enter as indicators, here and in relate ... adjusting for""",
    "control": """levels against a control, the lowest effective dose, unequal spread (try them on the demo's doses)
  compare weight by dose against "0"                  every other dose against "0": max-T step-down
  compare weight by dose against "0" using ranks      rank sums re-ranked for each pair
  compare weight by dose against "0" adjust max-t single-step   simultaneous intervals agree with it
  compare weight by dose ordered against "0"          step-down trend: the lowest effective dose
  compare weight by dose levels "40", "0" using welch           the Welch t by permutation
  compare weight by dose levels "40", "0" using brunner-munzel  P(40 > 0) + 1/2 P(40 = 0)
beside them: Dunnett's many-to-one t, Williams' test, the Welch and Brunner-Munzel t""",
    "relate": """relate: association and slopes
  relate mass to light                                Pearson correlation by permutation
  relate mass to light using kendall                  Kendall's tau (spearman: Spearman's rho)
  relate mass to light using slope                    slope with its exact interval
  relate mass to light using slope adjusting for tray  Freedman-Lane residual permutation
  relate mass to light using slope adjusting for bench  a text covariate: indicator columns""",
    "count": """count: tables, paired outcomes, one proportion
  count sprouted by dose in plots                     r x c exact test (fisher, chi-square, likelihood-ratio)
  count sprouted by dose in plots ordered             trend (linear-by-linear)
  count [[9, 1], [3, 7]]                              Fisher's exact test, conditional odds ratio
  count first vs second paired                        McNemar's exact test (your two yes/no columns)
  count 7 of 20 vs 0.5                                exact binomial test, Clopper-Pearson interval
  count sprouted by dose in plots levels "40", "0"    choose the arms; the last named is the reference
  count [[9, 1], [3, 7]] rows "treated", "control" columns "better", "same"   name an inline table
two proportions, strata, rates, a binary response: help events""",
    "events": """counts and events (try them on the demo's sprays)
  count 3 of 20 vs 9 of 21                    two proportions: Boschloo's test; risk difference and ratio
  count 3 of 20 vs 9 of 21 using barnard      Barnard's test (score); using fisher: conditional on the total
  count wilted by spray using boschloo        two proportions from two columns
  count wilted by spray within bench          2 x 2 x K: common odds ratio (exact), Zelen's homogeneity beside
  count wilted by dose within bench ordered   stratified trend; using homogeneity: Zelen's test alone
  count 7 events in 120.5 vs 0.05             one rate: exact Poisson test, Garwood interval
  count 7 events in 120.5 vs 2 events in 98   two rates: exact conditional test of the rate ratio
  relate wilted to dose                       a two-valued response: exact conditional logistic slope
the event is the response's second value in natural order (1 of 0 / 1, "yes" of "no")
censored times to an event (try them on the demo's lamps and bulbs)
  compare days by supplier event failed       log-rank test, exact over the labels; failed: 1 / 0
  compare days by supplier event state "out"  your text column: that value marks the event
  ... using gehan | tarone-ware | peto-prentice   weighted forms; the chi-square beside each
  compare days by supplier event failed levels "Corvo", "Halden" within house in bulbs
                                              two suppliers, each house its own risk sets,
                                              labels permuted within houses
  compare days by supplier event failed in bulbs   3 suppliers: the k-sample log-rank test
  robustness compare days by supplier event failed in lamps   event-time laws, censoring""",
    "many": """several responses or comparisons at once, permuted together
  compare mass, light by recipe levels "A", "B" adjust max-t step-down
  compare every numeric except tray by recipe adjust max-t
  compare mass by recipe pairwise adjust holm
  compare value by recipe for each marker adjust fdr top 20   (your long table: a marker column)
adjustments: holm, fdr (Benjamini-Hochberg), max-t, min-p [single-step | step-down], none
filters: top N, below 0.05; set workers 2, set cluster "tcp://host:8786" to scale out""",
    "options": """options follow the statement, in any order
  using FAMILY                   statistic family (help families)
  alternative two-sided|higher|lower   'higher' means the effect named is positive
  confidence 90%                 level of the intervals
  exact                          insist on an exact method (refused past a hard ceiling)
  sampled 50000                  Monte Carlo with that many draws
  seed 7                         seed for Monte Carlo (default: from the statement's text)
  seed fresh                     a new seed on this run (printed)
  in TABLE                       take the columns from TABLE""",
    "robustness": """robustness STATEMENT: does normality matter for this design? (by simulation)
  robustness compare mass by recipe levels "A", "B"        six error laws, 2,000 data sets each
  robustness compare yield by dose within block in plots   blocks kept; treatments within blocks
  robustness relate mass to light using slope shift 1 sd   power at a slope of 1 sd of error per sd of x
  robustness count [[9, 1], [3, 7]] shift 3                counts: sampling schemes, power at odds ratio 3
  robustness count 7 events in 120.5 vs 2 events in 98     rates: Poisson counts, bursts, the total fixed
  compare mass by recipe picture "null.svg"                the null distribution, also as a file
  explain robustness compare mass by recipe                what the check would do, and its time
options: datasets N (per law), significance 1%, shift X [sd], seed N, picture "panel.svg"
every result also carries diagnostics: skewness, largest residual, spread ratio""",
    "power": """power: power and sample size by simulation, before the data or from a pilot
  power groups 6, 6 shift 1 sd                          a layout of two groups, normal errors
  power groups 6, 6 shift 1 sd using ranks for power 80%   the smallest n a group reaching 80%
  power pairs 10 shift 0.5 sd law t3                    pairs (sign flips), heavy-tailed errors
  power sample 12 shift 1 sd using signs                one sample; groups 5, 5, 5 for three groups
  power compare mass by recipe levels "A", "B" n 8       the pilot's design at 8 a group, its observed effect
  power compare mass by recipe levels "A", "B" law pilot shift 1 sd   the pilot's residuals resampled
  power groups 6, 12 shift 1 sd for power 80%           unequal groups: the search keeps 1 : 2
  power count proportions 0.2 vs 0.6 n 15               two proportions: exact power, summed over outcomes
  power count proportion 0.7 vs 0.5 for power 80%       one proportion (true 0.7, tested against 0.5)
  explain power groups 6, 6 shift 1 sd for power 80%    what the run would do and its time; nothing run
options: n N[, N ...] (a group; several: the allocation a search keeps), shift X [sd], law normal|t3|lognormal|exponential|contaminated|pilot,
         for power 80%, datasets N, significance 1%, seed N, picture "power.png", and the test's own
every line shows the permutation test, its normal-theory counterpart, and the smallest p the design can give""",
    "session": """session statements
  load "file.csv" as name        csv, txt, tsv, parquet, xlsx, xls
  load "f.csv" delimiter ";" decimal ","   name them (else found from the file)
  load "book.xlsx" sheet "data"  a workbook's sheet (else the first)
  use name                       the table the statements that follow use
  describe name                  columns, types, missing values, levels
  show tables | show settings
  set seed 11 | set confidence 90% | set alternative higher | set budget 5s | set format json
  set seed fresh | set seed statement   a new seed each run | each statement's own (default)
  explain STATEMENT              the plan and its cost; nothing is run
  save "file.pq"                 write what ran as a query file that replays
  save report "report.html"      an HTML report: results, pictures, methods, data files, seeds
  copy                           the last result's reporting sentence, ready to copy
  set format sentences           one reporting sentence per result
  quit""",
}
TOPICS["set"] = TOPICS["session"]
TOPICS["load"] = TOPICS["session"]
TOPICS["ordered"] = TOPICS["within"] = TOPICS["groups"]
TOPICS["litters"] = TOPICS["incomplete"] = TOPICS["units"]
TOPICS["tables"] = TOPICS["count"]
TOPICS["proportions"] = TOPICS["rates"] = TOPICS["strata"] = TOPICS["events"]
TOPICS["picture"] = TOPICS["diagnostics"] = TOPICS["robustness"]
TOPICS["sample-size"] = TOPICS["law"] = TOPICS["power"]
TOPICS["margin"] = TOPICS["equivalence"] = TOPICS["compare"]
TOPICS["adjust"] = TOPICS["pairwise"] = TOPICS["many"]
TOPICS["against"] = TOPICS["dose"] = TOPICS["control"]
TOPICS["adjusting"] = TOPICS["covariates"] = TOPICS["and"] = TOPICS["factors"]


def topics() -> list[str]:
    """Every help topic: the pages above, `families`, and one page per family word."""
    from .families.registry import keywords

    return sorted(set(TOPICS) | {"families"} | set(keywords()))


def help_text(topic) -> str:
    if topic is None:
        return ("permq: exact permutation and rank tests beside their normal-theory counterparts\n"
                "topics: " + ", ".join(topics()) + "\n\n" + TOPICS["compare"])
    topic = str(topic).lower()
    if topic in TOPICS:
        return TOPICS[topic]
    if topic == "families":
        return families_page()
    from .families.registry import keywords

    if topic in keywords():
        return family_page(topic)
    import difflib

    close = difflib.get_close_matches(topic, topics(), n=1)
    hint = f" (did you mean '{close[0]}'?)" if close else ""
    return f"no help on '{topic}'{hint}; topics: " + ", ".join(topics())


def families_page() -> str:
    """`help families`: every word `using` takes, with the designs it applies to (registry)."""
    from .families import registry

    lines = ["test families (after 'using'); 'help WORD' tells more of one"]
    for verb in ("compare", "relate", "count"):
        words = registry.for_verb(verb)
        lines.append(f"  {verb}:")
        for w in words:
            lines.append(f"    {w:<17} {_summary(w)}")
    lines.append("the default, where 'using' is left out:")
    for name, kind in registry.kinds().items():
        if registry.for_kind(name):
            lines.append(f"    {kind.words + ':':<30} {registry.default(name).title}")
    return "\n".join(lines)


def family_page(word: str) -> str:
    """`help ranks`: what the word means for each design, with counterpart and estimate."""
    from .families import registry

    lines = [f"using {word}: {_summary(word)}"]
    for f in registry.families():
        if f.keyword != word:
            continue
        kinds = ", ".join(registry.kind(k).words for k in f.kinds)
        lines.append(f"  {kinds}: {f.title}")
        lines.append(f"    beside it: {f.normal}")
        if f.estimate:
            lines.append(f"    estimate: {f.estimate}")
        if f.help:
            lines.extend("    " + line for line in f.help.splitlines())
    return "\n".join(lines)


def _summary(word: str) -> str:
    from .families import registry

    return next((f.summary for f in registry.families() if f.keyword == word and f.summary),
                next(f.title for f in registry.families() if f.keyword == word))
