"""Allocation: how many printed rows each term gets out of a budget.

Each term offers options (k rows, the error left at k rows). Spending rows where they buy the most accuracy
is the marginal-gain allocation; because a term's error curve need not be convex, the greedy rule is not
always optimal, so it is solved exactly as a small knapsack by dynamic programming over the terms:

    minimise   sum over terms t of cost_t(k_t)
    subject to sum over terms t of size_t(k_t) <= budget.
"""

from __future__ import annotations

import numpy as np


def allocate_rows(options: list[list], budget: int) -> list[int] | None:
    """Index of the chosen option of every term (options have `.size` and `.cost`), or None if even the
    smallest options exceed the budget. Ties go to fewer rows."""
    inf = float("inf")
    best = np.full(budget + 1, inf)
    best[0] = 0.0
    choices = []
    for opts in options:
        new = np.full(budget + 1, inf)
        pick = np.full(budget + 1, -1, dtype=np.int64)
        for i, opt in enumerate(opts):
            if opt.size > budget:
                continue
            shifted = np.full(budget + 1, inf)
            shifted[opt.size:] = best[: budget + 1 - opt.size] + opt.cost
            better = shifted < new - 1e-15
            new[better] = shifted[better]
            pick[better] = i
        best = new
        choices.append(pick)
    if not np.isfinite(best).any():
        return None
    # the cheapest total; among (near-)equal costs the smallest budget used
    low = best.min()
    spent = int(np.flatnonzero(best <= low + 1e-12 * max(1.0, abs(low)))[0])
    picked = []
    for t in range(len(options) - 1, -1, -1):
        i = int(choices[t][spent])
        picked.append(i)
        spent -= options[t][i].size
    return picked[::-1]
