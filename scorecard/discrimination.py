"""Discrimination: the weighted AUC and the AUC expected under a model's own risks, in one place for quantize,
the edit costs and the audit.

The expected AUC counts every patient once as an event with weight p and once as a non-event with weight
1 - p, over ALL ordered pairs including a patient with itself (a tie, worth one half). Of the two usual rules
for that self-pair this one is kept because (1) it is exactly scikit-learn's roc_auc_score with sample_weight
on the doubled cohort, an outside reference anyone can rerun; (2) the audit's figure (`scorecard check`) and
the quantizer's `achieved` figure then agree on the same patients; (3) it is defined for any cohort with some
risk strictly between 0 and 1. Leaving the self-pairs out (the model-based concordance of van Klaveren et al.,
Statistics in Medicine 2016) differs by a relative O(1/n): sum p(1-p) / (sum p * sum (1-p)).
"""

from __future__ import annotations

import numpy as np


def tie_groups(score: np.ndarray) -> tuple[np.ndarray, int]:
    """Rank of each score among the distinct scores (ties share a group) and the number of groups."""
    values, inverse = np.unique(np.asarray(score, dtype=float), return_inverse=True)
    return inverse.astype(np.int64), len(values)


def weighted_auc(groups: np.ndarray, n_groups: int, w_pos: np.ndarray, w_neg: np.ndarray) -> float:
    """Area under the ROC curve with weighted positives and negatives (ties count one half).

    AUC = sum_i sum_j w_pos_i w_neg_j [s_i > s_j] + 1/2 [s_i = s_j], divided by (sum w_pos)(sum w_neg): the
    Mann-Whitney form (Hanley & McNeil, Radiology 1982). With 0/1 weights it is the ordinary AUC, equal to
    scikit-learn's roc_auc_score; with w_pos = p, w_neg = 1 - p it is the AUC expected when outcomes follow the
    risks p. `groups` ranks the scores (ties share a group), see `tie_groups`.
    """
    pos = np.bincount(groups, weights=w_pos, minlength=n_groups)
    neg = np.bincount(groups, weights=w_neg, minlength=n_groups)
    return auc_from_group_sums(pos, neg)


def auc_from_group_sums(pos: np.ndarray, neg: np.ndarray) -> float:
    """`weighted_auc` from the positive and negative weight of each tie group, groups in ascending score."""
    below = np.cumsum(neg) - neg
    denom = pos.sum() * neg.sum()
    if denom <= 0:
        return float("nan")
    return float((pos * (below + 0.5 * neg)).sum() / denom)


def expected_auc(risk: np.ndarray, score: np.ndarray) -> float:
    """The AUC of `score` expected when patient i has the event with probability risk[i] (ties count one
    half, self-pairs included: see the module note). NaN when no risk lies strictly between 0 and 1."""
    groups, n_groups = tie_groups(score)
    p = np.asarray(risk, dtype=float)
    return weighted_auc(groups, n_groups, p, 1.0 - p)
