"""Many tests on one reference set: the shared arrangements, the joint pass (`joint`), its loops
(`kernels`, `compiled`), multiplicity adjustments, per-response estimates, and the workers."""
