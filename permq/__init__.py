"""permq: exact and permutation inference for small experiments."""
