"""Exact tests on counts: r x c tables by a network over columns (`rxc`, `network`, `join`,
`stats`), the 2 x 2 table (`twobytwo`), paired outcomes (`paired`) and one proportion
(`proportion`)."""
