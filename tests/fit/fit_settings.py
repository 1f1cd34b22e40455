"""Settings that keep the fit tests fast: two bags in this process, a larger step, shorter patience."""

QUICK = dict(bags=2, n_jobs=1, learning_rate=0.1, n_iter_no_change=15)
