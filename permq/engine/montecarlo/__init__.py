"""Monte Carlo: seeded draws in fixed stream units (`sampling`), the inner loops with their numpy
path (`draws`) and the same loops compiled with numba (`compiled`, loaded on first use)."""
