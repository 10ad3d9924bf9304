"""Power and sample size by simulation (`power ...`)."""
