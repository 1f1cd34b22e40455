"""The statistics of the agreement report, as plain functions on arrays.

Each function states what it computes and where the method comes from; `scorecard.audit.agreement` strings
them together for one sheet, one model and one cohort. They are written for tens of millions of patients in
bounded memory: the model's AUC (and each bootstrap replicate of it) is summed over patients visited in
ascending score order, a block of `BLOCK` patients at a time, so no array per tie group is ever built; the
sheet's AUC comes from its few dozen totals with `np.bincount`; logistic fits run on grouped data, their sums
taken a block at a time.
"""

from __future__ import annotations

import numpy as np

from scorecard.discrimination import auc_from_group_sums, tie_groups, weighted_auc  # noqa: F401  the report's AUCs

BLOCK = 1 << 20  # patients per block of the blocked sums (about 8 MB per float array); fixed, so results never depend on the machine


def run_ids(sorted_score: np.ndarray) -> np.ndarray:
    """The tie group of each patient of an ascending score: 0 for the first run of equal scores, then 1, 2, ..."""
    ids = np.zeros(len(sorted_score), dtype=np.int32 if len(sorted_score) < 2**31 else np.int64)
    if len(sorted_score) > 1:
        np.cumsum(sorted_score[1:] != sorted_score[:-1], out=ids[1:])
    return ids


class SortedAUC:
    """The Mann-Whitney sums of `weighted_auc` over patients handed over in ascending score order, block by
    block: each block's tie groups are summed with `np.bincount` and closed against the negative weight of
    every group below, and a group that runs on into the next block is carried over. The same AUC as
    `weighted_auc` (to float rounding), in memory of one block."""

    def __init__(self):
        self.numerator = 0.0
        self.below = 0.0  # negative weight of every closed group
        self.positive = 0.0
        self._carry: tuple[int, float, float] | None = None  # (run id, positive, negative) of the open group

    def add(self, ids: np.ndarray, w_pos: np.ndarray, w_neg: np.ndarray) -> None:
        """A block of patients: their run ids (`run_ids` of the whole ascending score) and weights."""
        if len(ids) == 0:
            return
        local = ids - ids[0]
        pos = np.bincount(local, weights=w_pos)
        neg = np.bincount(local, weights=w_neg)
        if self._carry is not None:
            if self._carry[0] == ids[0]:
                pos[0] += self._carry[1]
                neg[0] += self._carry[2]
            else:
                self._close(self._carry[1], self._carry[2])
        p, q = pos[:-1], neg[:-1]
        if len(p):
            before = np.cumsum(q)
            before -= q
            before += self.below
            before += 0.5 * q
            self.numerator += float(np.dot(p, before))
            self.below += float(q.sum())
            self.positive += float(p.sum())
        self._carry = (int(ids[-1]), float(pos[-1]), float(neg[-1]))

    def _close(self, p: float, q: float) -> None:
        self.numerator += p * (self.below + 0.5 * q)
        self.below += q
        self.positive += p

    def auc(self) -> float:
        if self._carry is not None:
            self._close(self._carry[1], self._carry[2])
            self._carry = None
        denom = self.positive * self.below
        return float(self.numerator / denom) if denom > 0 else float("nan")


def sorted_auc(ids: np.ndarray, w_pos: np.ndarray, w_neg: np.ndarray | None = None) -> float:
    """`weighted_auc` of an ascending score given by its `run_ids`; w_neg defaults to 1 - w_pos."""
    acc = SortedAUC()
    for part in blocks(len(ids)):
        wp = w_pos[part].astype(float, copy=False)
        acc.add(ids[part], wp, 1.0 - wp if w_neg is None else w_neg[part])
    return acc.auc()


def blocks(n: int):
    """Slices of `BLOCK` patients covering 0..n: every full-cohort sum below is taken a block at a time, so its
    temporaries are of one block, and the order of additions is fixed by n alone (never by the chunking)."""
    return [slice(start, start + BLOCK) for start in range(0, n, BLOCK)]


def total_groups(total: np.ndarray) -> tuple[np.ndarray, int, int]:
    """Tie group of each integer sheet total (total - lowest, int16 when it fits: a group per patient of tens of
    millions), the number of groups and the lowest total."""
    low = int(total.min())
    n_groups = int(total.max()) - low + 1
    return (total - low).astype(np.int16 if n_groups <= 2**15 else np.int32, copy=False), n_groups, low


def group_sums(groups: np.ndarray, n_groups: int, w_pos: np.ndarray, w_neg: np.ndarray | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Positive and negative weight per group (`np.bincount`), a block at a time; w_neg defaults to 1 - w_pos."""
    pos, neg = np.zeros(n_groups), np.zeros(n_groups)
    for part in blocks(len(groups)):
        wp = w_pos[part].astype(float, copy=False)
        pos += np.bincount(groups[part], weights=wp, minlength=n_groups)
        neg += np.bincount(groups[part], weights=1.0 - wp if w_neg is None else w_neg[part], minlength=n_groups)
    return pos, neg


def poisson_weight_table(size: int = 65536) -> np.ndarray:
    """Poisson(1) quantiles at `size` equally likely points: indexing it with uniform integers draws Poisson(1)
    weights (to 1/size in probability) far faster than a Poisson generator. P(k) = e^-1 / k!."""
    k = np.arange(20)
    cdf = np.cumsum(np.exp(-1.0) / np.cumprod(np.r_[1.0, k[1:]]))
    return np.searchsorted(cdf, (np.arange(size) + 0.5) / size).astype(float)


def bootstrap_auc_difference(
    ids_a: np.ndarray, groups_b: np.ndarray, n_b: int, w_pos: np.ndarray, w_neg: np.ndarray | None = None,
    replicates: int = 200, seed: int = 0, level: float = 0.95,
) -> tuple[float, float]:
    """Percentile interval of AUC(a) - AUC(b) over paired bootstrap resamples of the patients.

    Score a is given by its `run_ids` (patients in ascending order of a), score b by its tie groups
    (`groups_b` in 0..n_b-1, few: the sheet's totals); w_neg defaults to 1 - w_pos. Each replicate reweights
    every patient by an independent Poisson(1) count, the large-sample form of drawing n patients with
    replacement (the Poisson bootstrap: Hanley & MacGibbon, Comput Methods Programs Biomed 2006); both scores
    see the same weights, so the interval is for the paired difference (Efron & Tibshirani, An Introduction to
    the Bootstrap, 1993, percentile interval). The weights are drawn a block of `BLOCK` patients at a time,
    in patient order, so memory stays that of one block. Seeded: same inputs, same interval.
    """
    rng = np.random.default_rng(seed)
    table = poisson_weight_table()
    diffs = np.empty(replicates)
    n = len(w_pos)
    for r in range(replicates):
        acc = SortedAUC()
        pos_b, neg_b = np.zeros(n_b), np.zeros(n_b)
        for start in range(0, n, BLOCK):
            part = slice(start, start + BLOCK)
            w = table[rng.integers(0, len(table), min(BLOCK, n - start), dtype=np.uint16)]
            wp = w * w_pos[part]
            wn = w * (1.0 - w_pos[part] if w_neg is None else w_neg[part])
            acc.add(ids_a[part], wp, wn)
            pos_b += np.bincount(groups_b[part], weights=wp, minlength=n_b)
            neg_b += np.bincount(groups_b[part], weights=wn, minlength=n_b)
        diffs[r] = acc.auc() - auc_from_group_sums(pos_b, neg_b)
    tail = (1 - level) / 2 * 100
    low, high = np.nanpercentile(diffs, [tail, 100 - tail])
    return float(low), float(high)


def logistic_calibration(x: np.ndarray, successes: np.ndarray, trials: np.ndarray | None = None,
                         iterations: int = 50) -> tuple[float, float]:
    """Intercept a and slope b maximising the binomial log-likelihood of logit P(event) = a + b x.

    Iteratively reweighted least squares (McCullagh & Nelder, Generalized Linear Models, 1989, ch. 4) on
    grouped data: `successes` events out of `trials` at each x (fractional counts allowed, so the model's own
    risk can be the response). The slope is Cox's calibration slope (Cox, Biometrika 1958): 1 and intercept 0
    mean the risks need no recalibration. Returns (nan, nan) when x does not vary.

    `trials` None is one trial per x (patient-level data: successes 0/1, any integer or float type), taken as
    it is, without a grouped or float copy of the arrays: the model's log-odds of tens of millions of patients
    are nearly all distinct, so grouping them would only copy them.
    """
    x = np.asarray(x)
    s = np.asarray(successes)
    if trials is not None:
        m = np.asarray(trials, dtype=float)
        keep = m > 0
        x, s, m = np.asarray(x, dtype=float)[keep], np.asarray(s, dtype=float)[keep], m[keep]
    if len(x) == 0 or not float(x.max()) > float(x.min()):
        return float("nan"), float("nan")
    a, b = 0.0, 0.0
    total = float(m.sum()) if trials is not None else float(len(x))
    rate = float(sum(float(s[part].sum(dtype=float)) for part in blocks(len(s)))) / total
    if 0 < rate < 1:
        a = float(np.log(rate / (1 - rate)))
    for _ in range(iterations):
        # weighted least squares of the working response z on [1, x], its sums taken a block at a time
        sw = swx = swxx = swz = swxz = 0.0
        for part in blocks(len(x)):
            xb, sb = x[part].astype(float, copy=False), s[part].astype(float, copy=False)
            mb = 1.0 if trials is None else m[part]
            eta = a + b * xb
            p = 1 / (1 + np.exp(-eta))
            w = np.maximum(mb * p * (1 - p), 1e-300)
            z = eta + (sb - mb * p) / w
            wx = w * xb
            sw, swx, swxx = sw + w.sum(), swx + wx.sum(), swxx + (wx * xb).sum()
            swz, swxz = swz + (w * z).sum(), swxz + (wx * z).sum()
        det = sw * swxx - swx * swx
        if det <= 0:
            return float("nan"), float("nan")
        new_a = (swxx * swz - swx * swxz) / det
        new_b = (sw * swxz - swx * swz) / det
        done = abs(new_a - a) + abs(new_b - b) < 1e-12 * (1 + abs(a) + abs(b))
        a, b = float(new_a), float(new_b)
        if done:
            break
    return a, b


def grouped(x: np.ndarray, successes: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Collapse patients sharing the same x into (x ascending, sum of successes, count) — the binomial
    likelihood is unchanged, and a sheet has only a few dozen distinct totals. Whole numbers (totals) are
    counted with `np.bincount`, an ascending x by its runs, anything else through `np.unique`."""
    x = np.asarray(x)
    successes = np.asarray(successes, dtype=float)
    if np.issubdtype(x.dtype, np.integer):
        low = int(x.min())
        count = np.bincount(x - low)
        kept = np.flatnonzero(count)
        return (kept + low).astype(float), np.bincount(x - low, weights=successes)[kept], count[kept].astype(float)
    x = x.astype(float, copy=False)
    if len(x) > 1 and bool(np.all(x[1:] >= x[:-1])):
        starts = np.flatnonzero(np.r_[True, x[1:] != x[:-1]])
        return x[starts], np.add.reduceat(successes, starts), np.diff(np.r_[starts, len(x)]).astype(float)
    values, inverse = np.unique(x, return_inverse=True)
    return values, np.bincount(inverse, weights=successes, minlength=len(values)), np.bincount(inverse, minlength=len(values)).astype(float)


def weighted_percentiles(values: np.ndarray, counts: np.ndarray, q) -> np.ndarray:
    """np.percentile (its default, linear rule) of the multiset holding each value `counts` times, without
    building it: the slips' figures are kept as counts of (row, total)."""
    order = np.argsort(values, kind="stable")
    v, c = np.asarray(values, dtype=float)[order], np.asarray(counts, dtype=np.int64)[order]
    keep = c > 0
    v, c = v[keep], c[keep]
    ends = np.cumsum(c)  # ranks 0..ends[k]-1 hold values v[0..k]
    h = (ends[-1] - 1) * np.asarray(q, dtype=float) / 100
    low = np.floor(h).astype(np.int64)
    at = lambda rank: v[np.searchsorted(ends, rank, side="right")]  # noqa: E731
    a, b = at(low), at(np.minimum(low + 1, ends[-1] - 1))
    return a + (b - a) * (h - low)


def brier(risk: np.ndarray, outcome: np.ndarray) -> float:
    """Mean squared difference between risk and the 0/1 outcome (Brier, Monthly Weather Review 1950)."""
    risk, outcome = np.asarray(risk), np.asarray(outcome)
    return sum(float(np.sum((risk[part] - outcome[part]) ** 2)) for part in blocks(len(risk))) / len(risk)


def expected_brier(risk: np.ndarray, true_risk: np.ndarray) -> float:
    """Brier score expected when each outcome is drawn with probability `true_risk`:
    mean(q (1 - q) + (risk - q)^2), the same quantity as scikit-learn's brier_score_loss on every patient
    duplicated as an event (weight q) and a non-event (weight 1 - q)."""
    risk, true_risk = np.asarray(risk), np.asarray(true_risk)
    total = 0.0
    for part in blocks(len(risk)):
        q = true_risk[part].astype(float, copy=False)
        total += float(np.sum(q * (1 - q) + (risk[part] - q) ** 2))
    return total / len(risk)


def calibration_table(risk: np.ndarray, outcome: np.ndarray, groups: int = 10) -> list[dict]:
    """Mean predicted risk and observed event rate in `groups` equal-sized groups of predicted risk
    (deciles by default; common practice for calibration plots). Ties are kept together by a stable sort; risks
    already in ascending order (the model's, in the check) are split as they are, by views."""
    risk = np.asarray(risk, dtype=float)
    ascending = all(bool(np.all(risk[part][1:] >= risk[part][:-1])) for part in blocks(len(risk))) and \
        all(risk[e - 1] <= risk[e] for e in range(BLOCK, len(risk), BLOCK))
    order = None if ascending else np.argsort(risk, kind="stable")
    n = len(risk)
    sizes = [n // groups + 1] * (n % groups) + [n // groups] * (groups - n % groups)  # np.array_split's sections
    out, start = [], 0
    for size in sizes:
        if size == 0:
            continue
        pick = slice(start, start + size) if ascending else order[start:start + size]
        start += size
        out.append({"n": int(size), "predicted": float(np.mean(risk[pick])),
                    "observed": float(np.mean(np.asarray(outcome)[pick], dtype=float))})
    return out
