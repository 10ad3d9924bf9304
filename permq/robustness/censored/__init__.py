"""The robustness check of censored times: schemes of event-time laws and censoring."""
