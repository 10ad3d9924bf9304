"""The robustness check for counts: sampling schemes that keep the margins (`schemes`), both tests
on stacks of simulated tables (`batch`), the check itself (`check`) and its verdicts (`report`)."""
