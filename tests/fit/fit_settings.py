"""Settings that keep the fit tests fast: two repeats in this process, a larger step, shorter patience, one
shrinkage (no choice among several)."""

QUICK = dict(repeats=2, n_jobs=1, learning_rate=0.1, patience=15, shrinkage=10.0)
