"""Which published method a result is, in words, with its sources (for sentences and reports).

`method_of(record)` reads a result's JSON object (the contract: family and statistic name)
and gives a `Method`: the test's name as a report writes it, and the keys of its sources in
SOURCES (or in a family module's BIBLIOGRAPHY), as the family module declares them in its
`REPORTED` (families/registry.py). `reference_words(record)` says what an exact p-value is
counted over. `sources_for(records)` collects every source a list of records needs (tests,
normal-theory counterparts, intervals, effect sizes, adjustments, Monte Carlo p-values).
Nothing here computes.

The Kerby (2014) and Tomczak and Tomczak (2014) entries were checked against the articles' first
pages, the Anderson and ter Braak (2003) and Rosenbaum (2002) entries against their
bibliographic records; the other entries are the standard citations, given from memory.
"""
from __future__ import annotations

from dataclasses import dataclass

SOURCES = {
    "barnard-1945": "Barnard, G. A. (1945). A new test for 2 x 2 tables. Nature 156, 177.",
    "boschloo-1970": "Boschloo, R. D. (1970). Raised conditional level of significance for the "
                     "2 x 2-table when testing the equality of two probabilities. Statistica "
                     "Neerlandica 24, 1-35.",
    "chan-zhang-1999": "Chan, I. S. F. and Zhang, Z. (1999). Test-based exact confidence "
                       "intervals for the difference of two binomial proportions. Biometrics "
                       "55, 1202-1209.",
    "santner-snell-1980": "Santner, T. J. and Snell, M. K. (1980). Small-sample confidence "
                          "intervals for p1 - p2 and p1/p2 in 2 x 2 contingency tables. Journal "
                          "of the American Statistical Association 75, 386-394.",
    "newcombe-1998": "Newcombe, R. G. (1998). Interval estimation for the difference between "
                     "independent proportions: comparison of eleven methods. Statistics in "
                     "Medicine 17, 873-890.",
    "miettinen-nurminen-1985": "Miettinen, O. and Nurminen, M. (1985). Comparative analysis of "
                               "two rates. Statistics in Medicine 4, 213-226.",
    "birch-1964": "Birch, M. W. (1964). The detection of partial association, I: the 2 x 2 "
                  "case. Journal of the Royal Statistical Society B 26, 313-324.",
    "mehta-patel-gray-1985": "Mehta, C. R., Patel, N. R. and Gray, R. (1985). Computing an "
                             "exact confidence interval for the common odds ratio in several "
                             "2 x 2 contingency tables. Journal of the American Statistical "
                             "Association 80, 969-973.",
    "zelen-1971": "Zelen, M. (1971). The analysis of several 2 x 2 contingency tables. "
                  "Biometrika 58, 129-137.",
    "mantel-haenszel-1959": "Mantel, N. and Haenszel, W. (1959). Statistical aspects of the "
                            "analysis of data from retrospective studies of disease. Journal of "
                            "the National Cancer Institute 22, 719-748.",
    "breslow-day-1980": "Breslow, N. E. and Day, N. E. (1980). Statistical Methods in Cancer "
                        "Research, Vol. I: The Analysis of Case-Control Studies. Lyon: IARC.",
    "mantel-1963": "Mantel, N. (1963). Chi-square tests with one degree of freedom; extensions "
                   "of the Mantel-Haenszel procedure. Journal of the American Statistical "
                   "Association 58, 690-700.",
    "garwood-1936": "Garwood, F. (1936). Fiducial limits for the Poisson distribution. "
                    "Biometrika 28, 437-442.",
    "cox-1970": "Cox, D. R. (1970). The Analysis of Binary Data. London: Methuen.",
    "hirji-mehta-patel-1987": "Hirji, K. F., Mehta, C. R. and Patel, N. R. (1987). Computing "
                              "distributions for exact logistic regression. Journal of the "
                              "American Statistical Association 82, 1110-1117.",
    "pitman-1937": "Pitman, E. J. G. (1937). Significance tests which may be applied to samples "
                   "from any populations. Supplement to the Journal of the Royal Statistical "
                   "Society 4, 119-130.",
    "pitman-1937b": "Pitman, E. J. G. (1937). Significance tests which may be applied to "
                    "samples from any populations. II. The correlation coefficient test. "
                    "Supplement to the Journal of the Royal Statistical Society 4, 225-232.",
    "pitman-1938": "Pitman, E. J. G. (1938). Significance tests which may be applied to "
                   "samples from any populations. III. The analysis of variance test. "
                   "Biometrika 29, 322-335.",
    "fisher-1925": "Fisher, R. A. (1925). Statistical Methods for Research Workers. Edinburgh: "
                   "Oliver and Boyd.",
    "fisher-1935": "Fisher, R. A. (1935). The Design of Experiments. Edinburgh: Oliver and Boyd.",
    "fisher-1935b": "Fisher, R. A. (1935). The logic of inductive inference. Journal of the "
                    "Royal Statistical Society 98, 39-82.",
    "wilcoxon-1945": "Wilcoxon, F. (1945). Individual comparisons by ranking methods. "
                     "Biometrics Bulletin 1, 80-83.",
    "mann-whitney-1947": "Mann, H. B. and Whitney, D. R. (1947). On a test of whether one of "
                         "two random variables is stochastically larger than the other. "
                         "Annals of Mathematical Statistics 18, 50-60.",
    "pratt-1959": "Pratt, J. W. (1959). Remarks on zeros and ties in the Wilcoxon signed rank "
                  "procedures. Journal of the American Statistical Association 54, 655-667.",
    "hodges-lehmann-1963": "Hodges, J. L. and Lehmann, E. L. (1963). Estimates of location "
                           "based on rank tests. Annals of Mathematical Statistics 34, 598-611.",
    "lehmann-1975": "Lehmann, E. L. (1975). Nonparametrics: Statistical Methods Based on "
                    "Ranks. San Francisco: Holden-Day.",
    "van-der-waerden-1952": "van der Waerden, B. L. (1952). Order tests for the two-sample "
                            "problem and their power. Indagationes Mathematicae 14, 453-458.",
    "mood-1950": "Mood, A. M. (1950). Introduction to the Theory of Statistics. New York: "
                 "McGraw-Hill.",
    "dixon-mood-1946": "Dixon, W. J. and Mood, A. M. (1946). The statistical sign test. "
                       "Journal of the American Statistical Association 41, 557-566.",
    "dunnett-1955": "Dunnett, C. W. (1955). A multiple comparison procedure for comparing "
                    "several treatments with a control. Journal of the American Statistical "
                    "Association 50, 1096-1121.",
    "steel-1959": "Steel, R. G. D. (1959). A multiple comparison rank sum test: treatments "
                  "versus control. Biometrics 15, 560-572.",
    "williams-1971": "Williams, D. A. (1971). A test for differences between treatment means "
                     "when several dose levels are compared with a zero dose control. "
                     "Biometrics 27, 103-117.",
    "tukey-ciminera-heyse-1985": "Tukey, J. W., Ciminera, J. L. and Heyse, J. F. (1985). "
                                 "Testing the statistical certainty of a response to "
                                 "increasing doses of a drug. Biometrics 41, 295-301.",
    "janssen-1997": "Janssen, A. (1997). Studentized permutation tests for non-i.i.d. "
                    "hypotheses and the generalized Behrens-Fisher problem. Statistics and "
                    "Probability Letters 36, 9-21.",
    "chung-romano-2013": "Chung, E. and Romano, J. P. (2013). Exact and asymptotically robust "
                         "permutation tests. Annals of Statistics 41, 484-507.",
    "brunner-munzel-2000": "Brunner, E. and Munzel, U. (2000). The nonparametric "
                           "Behrens-Fisher problem: asymptotic theory and a small-sample "
                           "approximation. Biometrical Journal 42, 17-25.",
    "neubert-brunner-2007": "Neubert, K. and Brunner, E. (2007). A studentized permutation "
                            "test for the non-parametric Behrens-Fisher problem. "
                            "Computational Statistics and Data Analysis 51, 5192-5204.",
    "student-1908": "Student (1908). The probable error of a mean. Biometrika 6, 1-25.",
    "welch-1947": "Welch, B. L. (1947). The generalization of 'Student's' problem when several "
                  "different population variances are involved. Biometrika 34, 28-35.",
    "welch-1951": "Welch, B. L. (1951). On the comparison of several mean values: an "
                  "alternative approach. Biometrika 38, 330-336.",
    "kruskal-wallis-1952": "Kruskal, W. H. and Wallis, W. A. (1952). Use of ranks in "
                           "one-criterion variance analysis. Journal of the American "
                           "Statistical Association 47, 583-621.",
    "jonckheere-1954": "Jonckheere, A. R. (1954). A distribution-free k-sample test against "
                       "ordered alternatives. Biometrika 41, 133-145.",
    "terpstra-1952": "Terpstra, T. J. (1952). The asymptotic normality and consistency of "
                     "Kendall's test against trend, when ties are present in one ranking. "
                     "Indagationes Mathematicae 14, 327-333.",
    "friedman-1937": "Friedman, M. (1937). The use of ranks to avoid the assumption of "
                     "normality implicit in the analysis of variance. Journal of the American "
                     "Statistical Association 32, 675-701.",
    "page-1963": "Page, E. B. (1963). Ordered hypotheses for multiple treatments: a "
                 "significance test for linear ranks. Journal of the American Statistical "
                 "Association 58, 216-230.",
    "kendall-1938": "Kendall, M. G. (1938). A new measure of rank correlation. Biometrika 30, "
                    "81-93.",
    "spearman-1904": "Spearman, C. (1904). The proof and measurement of association between "
                     "two things. American Journal of Psychology 15, 72-101.",
    "anderson-ter-braak-2003": "Anderson, M. J. and ter Braak, C. J. F. (2003). Permutation "
                               "tests for multi-factorial analysis of variance. Journal of "
                               "Statistical Computation and Simulation 73, 85-113.",
    "rosenbaum-2002": "Rosenbaum, P. R. (2002). Covariance adjustment in randomized experiments "
                      "and observational studies. Statistical Science 17, 286-327.",
    "freedman-lane-1983": "Freedman, D. and Lane, D. (1983). A nonstochastic interpretation of "
                          "reported significance levels. Journal of Business and Economic "
                          "Statistics 1, 292-298.",
    "freeman-halton-1951": "Freeman, G. H. and Halton, J. H. (1951). Note on an exact "
                           "treatment of contingency, goodness of fit and other problems of "
                           "significance. Biometrika 38, 141-149.",
    "mehta-patel-1983": "Mehta, C. R. and Patel, N. R. (1983). A network algorithm for "
                        "performing Fisher's exact test in r x c contingency tables. Journal "
                        "of the American Statistical Association 78, 427-434.",
    "cochran-1954": "Cochran, W. G. (1954). Some methods for strengthening the common "
                    "chi-square tests. Biometrics 10, 417-451.",
    "armitage-1955": "Armitage, P. (1955). Tests for linear trends in proportions and "
                     "frequencies. Biometrics 11, 375-386.",
    "mcnemar-1947": "McNemar, Q. (1947). Note on the sampling error of the difference between "
                    "correlated proportions or percentages. Psychometrika 12, 153-157.",
    "clopper-pearson-1934": "Clopper, C. J. and Pearson, E. S. (1934). The use of confidence "
                            "or fiducial limits illustrated in the case of the binomial. "
                            "Biometrika 26, 404-413.",
    "wilson-1927": "Wilson, E. B. (1927). Probable inference, the law of succession, and "
                   "statistical inference. Journal of the American Statistical Association "
                   "22, 209-212.",
    "woolf-1955": "Woolf, B. (1955). On estimating the relation between blood group and "
                  "disease. Annals of Human Genetics 19, 251-253.",
    "pearson-1900": "Pearson, K. (1900). On the criterion that a given system of deviations "
                    "from the probable in the case of a correlated system of variables is such "
                    "that it can be reasonably supposed to have arisen from random sampling. "
                    "Philosophical Magazine 50, 157-175.",
    "wilks-1938": "Wilks, S. S. (1938). The large-sample distribution of the likelihood ratio "
                  "for testing composite hypotheses. Annals of Mathematical Statistics 9, 60-62.",
    "fisher-1915": "Fisher, R. A. (1915). Frequency distribution of the values of the "
                   "correlation coefficient in samples from an indefinitely large population. "
                   "Biometrika 10, 507-521.",
    "mackinnon-white-1985": "MacKinnon, J. G. and White, H. (1985). Some "
                            "heteroskedasticity-consistent covariance matrix estimators with "
                            "improved finite sample properties. Journal of Econometrics 29, "
                            "305-325.",
    "westfall-young-1993": "Westfall, P. H. and Young, S. S. (1993). Resampling-Based "
                           "Multiple Testing. New York: Wiley.",
    "holm-1979": "Holm, S. (1979). A simple sequentially rejective multiple test procedure. "
                 "Scandinavian Journal of Statistics 6, 65-70.",
    "benjamini-hochberg-1995": "Benjamini, Y. and Hochberg, Y. (1995). Controlling the false "
                               "discovery rate: a practical and powerful approach to multiple "
                               "testing. Journal of the Royal Statistical Society B 57, 289-300.",
    "phipson-smyth-2010": "Phipson, B. and Smyth, G. K. (2010). Permutation p-values should "
                          "never be zero: calculating exact p-values when permutations are "
                          "randomly drawn. Statistical Applications in Genetics and Molecular "
                          "Biology 9, article 39.",
    "joanes-gill-1998": "Joanes, D. N. and Gill, C. A. (1998). Comparing measures of sample "
                        "skewness and kurtosis. Journal of the Royal Statistical Society D 47, "
                        "183-189.",
    "cohen-1988": "Cohen, J. (1988). Statistical Power Analysis for the Behavioral Sciences, "
                  "2nd edition. Hillsdale, NJ: Lawrence Erlbaum.",
    "vargha-2000": "Vargha, A. and Delaney, H. D. (2000). A critique and improvement of the CL "
                   "common language effect size statistics of McGraw and Wong. Journal of "
                   "Educational and Behavioral Statistics 25, 101-132.",
    "kerby-2014": "Kerby, D. S. (2014). The simple difference formula: an approach to teaching "
                  "nonparametric correlation. Comprehensive Psychology 3, article 1.",
    "tomczak-2014": "Tomczak, M. and Tomczak, E. (2014). The need to report effect size "
                    "estimates revisited. Trends in Sport Sciences 21, 19-25.",
    "kendall-1939": "Kendall, M. G. and Babington Smith, B. (1939). The problem of m rankings. "
                    "Annals of Mathematical Statistics 10, 275-287.",
    "cramer-1946": "Cramer, H. (1946). Mathematical Methods of Statistics. Princeton: "
                   "Princeton University Press.",
    "common-practice": "",     # a fact of the trade with no single source
}


@dataclass(frozen=True)
class Method:
    name: str                  # the test as a report names it
    sources: tuple             # keys of SOURCES
    what: str = ""             # one clause on what it tests, for the methods paragraph


# normal-theory counterparts and intervals: (start of the words) -> source keys
_NORMAL = [("Dunnett", ("dunnett-1955",)), ("Williams", ("williams-1971",)),
           ("Brunner-Munzel", ("brunner-munzel-2000",)),
           ("Welch one-way", ("welch-1951",)), ("Welch t", ("welch-1947",)),
           ("one-sample t", ("student-1908",)), ("one-way ANOVA", ("fisher-1925",)),
           ("two-way ANOVA", ("fisher-1925",)), ("ANCOVA", ("fisher-1925",)),
           ("Kruskal-Wallis", ("kruskal-wallis-1952",)),
           ("chi-square approximation to Friedman", ("friedman-1937",)),
           ("normal approximation to Page", ("page-1963",)),
           ("Jonckheere", ("jonckheere-1954",)), ("Wald z for the log odds", ("woolf-1955",)),
           ("Pearson chi-square", ("pearson-1900",)), ("likelihood-ratio", ("wilks-1938",)),
           ("McNemar", ("mcnemar-1947",)), ("Wilson", ("wilson-1927",)),
           ("Fisher's z", ("fisher-1915",)), ("Fisher z", ("fisher-1915",)),
           ("HC3", ("mackinnon-white-1985",)), ("Clopper-Pearson", ("clopper-pearson-1934",)),
           ("Hodges-Lehmann", ("hodges-lehmann-1963",)),
           ("linear-by-linear", ("cochran-1954",)),
           ("Mantel-Haenszel", ("mantel-haenszel-1959",)), ("Breslow-Day", ("breslow-day-1980",)),
           ("Newcombe", ("newcombe-1998",)), ("Miettinen-Nurminen", ("miettinen-nurminen-1985",)),
           ("Chan & Zhang", ("chan-zhang-1999", "santner-snell-1980")),
           ("Garwood", ("garwood-1936",)), ("Cochran-Armitage", ("armitage-1955",))]

_ADJUSTMENTS = [("max-t", ("westfall-young-1993",)), ("min-p", ("westfall-young-1993",)),
                ("holm", ("holm-1979",)), ("bonferroni", ("holm-1979",)),
                ("fdr", ("benjamini-hochberg-1995",)),
                ("benjamini", ("benjamini-hochberg-1995",))]


def method_of(record: dict) -> Method:
    """The named test of a result record (its JSON object): the family module's `REPORTED`
    declaration for its `family` and statistic name (families/registry.py)."""
    from ..contract.forms import form_of
    from ..families.registry import reported

    form = form_of(record)
    if form == "robustness":
        a = record.get("analysis", {})
        inner = method_of({"family": a.get("family", ""),
                           "statistic": {"name": a.get("statistic", "")}})
        return Method(f"robustness check of the {inner.name}", inner.sources)
    name = (record.get("statistic") or {}).get("name", "")
    declared = reported(record.get("family", ""), name)
    sources = declared.sources if declared else ()
    if form == "several":
        return Method(record.get("test") or (declared.name if declared else "several tests"),
                      _match(_ADJUSTMENTS, record.get("adjustment", "").lower()) + sources)
    if declared is not None and declared.name:
        return Method(declared.name, sources)
    return Method(f"permutation test of the {name}" if name else "permutation test", sources)


def reference_words(record: dict) -> str:
    """What an exact p-value is counted over, in words: "over 924 arrangements"."""
    from ..families.registry import reported
    from .numbers import count

    n = record.get("arrangements")
    declared = reported(record.get("family", ""), record["statistic"]["name"])
    words = declared.over if declared and declared.over else "over {n} arrangements"
    trials = f"{int(n) - 1:,}" if isinstance(n, (int, float)) else "?"
    return words.format(n=count(n), trials=trials)


def source_text(key: str) -> str:
    """A source's entry: the shared list's, or the one a family module declares."""
    if key in SOURCES:
        return SOURCES[key]
    from ..families.registry import bibliography

    return bibliography().get(key, "")


def normal_sources(words: str) -> tuple:
    return _match(_NORMAL, words)


def _match(table, words: str) -> tuple:
    for start, keys in table:
        if start.lower() in words.lower():
            return keys
    return ()


def sources_for(records) -> list:
    """Every source the records name, in order of first use, without repeats."""
    keys = []
    for r in records:
        if "error" in r or "plan" in r:
            continue
        keys += method_of(r).sources
        terms = [t.get("normal_theory") for t in r.get("terms") or []]   # two factors
        for nt in [r.get("normal_theory")] + list(r.get("normal_theory_also") or []) + terms:
            if nt:
                keys += normal_sources(nt.get("test", ""))
        for part in (r.get("estimate") or {}, r.get("normal_interval") or {}):
            keys += normal_sources(part.get("name", "") + " " + part.get("method", ""))
        keys += [s["source"] for s in r.get("effect_sizes") or [] if s.get("source")]
        if r.get("method") == "monte-carlo":
            keys.append("phipson-smyth-2010")
        if (r.get("diagnostics") or {}).get("skewness") is not None:
            keys.append("joanes-gill-1998")
    seen = []
    for k in keys:
        if k not in seen and source_text(k):
            seen.append(k)
    return seen


def short_citation(key: str) -> str:
    """"Mann and Whitney, 1947" from the source's entry."""
    text = source_text(key)
    if "(" not in text:
        return ""
    authors, rest = text.split(" (", 1)
    year = rest.split(")", 1)[0] + ("b" if key[-1] == "b" and key[-2].isdigit() else "")
    names = [a.strip().split(",")[0] for a in authors.replace(" and ", ", and ").split(", and ")]
    names = [n for n in names if n]
    who = names[0] + " et al." if len(names) > 2 else " and ".join(names)
    return f"{who}, {year}"
