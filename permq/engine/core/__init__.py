"""Numerical pieces every engine shares: the p-value rules, scores and their integer grid,
exact counting, complete enumeration, intervals from jump points, progress and cancel."""
