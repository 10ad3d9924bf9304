"""How much does normality matter for this design? Simulation under a panel of error laws.

    laws.py          the error laws (normal, t 3 df, lognormal, exponential, contaminated,
                     unequal spread / spread growing with x) and when they break exactness
    problem.py       a bound design reduced to its layout, its test and its effect in sd
    arrangements.py  the reference set as one matrix (every arrangement, or Monte Carlo draws)
    batch.py         both tests on many data sets at once (vectorised)
    simulate.py      rejection rates and power per law, with Monte Carlo standard errors
    report.py        verdicts and summary sentences; builds the RobustnessResult
    result.py        RobustnessResult (plain data, to_dict for JSON)
    executor.py      `robustness STATEMENT`: bind, analyse, simulate, report
    diagnostics.py   skewness, largest standardised residual, spread ratio on every result
    pictures.py      the null distribution of the statistic as plain data, for pictures
"""
