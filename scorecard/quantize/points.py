"""Scale and integer rounding: from row values in log-odds to integer points.

For a points scale s (log-odds per point), find integer points P (one per row) and an offset a minimising

    sum over patients i of w_i (a + s * sum_t P_t[row_t(i)] - y_i)^2

subject to: the total-points range sum_t (max_t P - min_t P) <= the allowed total, and P >= 0 unless
negative points are allowed. Independent rounding of each row (P = round(v / s), each term shifted so its
lowest row is 0) is the start; it is then improved by single-row +/-1 moves, always taking the move that
lowers the error most, until none does (a coordinate-wise local search on the exact quadratic; the
quadratic is kept in its Gram form, so a move costs O(rows), not O(patients)). The offset is re-solved in
closed form after every move. The scale itself is searched by the caller.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass
class Quadratic:
    """The weighted least-squares problem in row space: X'WX, X'Wy, X'W1, 1'W1, y'Wy."""

    gram: np.ndarray
    xwy: np.ndarray
    xw: np.ndarray
    sw: float
    swy: float
    yy: float

    @classmethod
    def from_rows(cls, row_ids: np.ndarray, starts: np.ndarray, y: np.ndarray, w: np.ndarray) -> "Quadratic":
        """From (patients x terms) global row ids, term t owning rows starts[t]..starts[t+1]-1.

        X (patients x rows, 0/1) is never formed: each block of X'WX is the weighted 2-D histogram of two
        terms' rows, computed by weighted bincounts over the patients."""
        n_terms = row_ids.shape[1]
        n_rows = int(starts[-1])
        sizes = np.diff(starts)
        ids = np.ascontiguousarray(row_ids.T)  # terms x patients
        upper = np.zeros((n_rows, n_rows))
        for s in range(n_terms):
            # rows of term s against the rows of every later term, one weighted bincount for all of them
            local = ids[s] - starts[s]
            keys = local[None, :] * n_rows + ids[s:]
            weights = np.broadcast_to(w, keys.shape)
            block = np.bincount(keys.ravel(), weights=weights.ravel(), minlength=sizes[s] * n_rows)
            upper[starts[s]:starts[s + 1], :] = block.reshape(sizes[s], n_rows)
        gram = upper + upper.T
        gram[np.diag_indices(n_rows)] /= 2  # a term's own block is diagonal and was counted twice
        flat = row_ids.ravel()
        ww = np.repeat(w, n_terms)
        return cls(
            gram=gram, xwy=np.bincount(flat, weights=np.repeat(w * y, n_terms), minlength=n_rows),
            xw=np.bincount(flat, weights=ww, minlength=n_rows),
            sw=float(w.sum()), swy=float(w @ y), yy=float(w @ (y * y)),
        )


def best_offset(q: Quadratic, scale: float, p: np.ndarray) -> float:
    return (q.swy - scale * float(q.xw @ p)) / q.sw


def round_points(q: Quadratic, values: np.ndarray, term_of_row: np.ndarray, scale: float, max_total: int,
                 allow_negative: bool = False, max_moves: int = 5000) -> tuple[np.ndarray, float] | None:
    """Integer points and offset for one scale, or None when independent rounding already breaks the
    total-points limit (a coarser scale is needed)."""
    n_terms = int(term_of_row.max()) + 1
    first_rows = np.concatenate([[0], np.flatnonzero(np.diff(term_of_row)) + 1])  # rows of a term are contiguous
    p = np.zeros(len(values))
    for t in range(n_terms):
        sel = term_of_row == t
        v = values[sel]
        p[sel] = np.round(v / scale) if allow_negative else np.round((v - v.min()) / scale)
    gp = q.gram @ p
    diag = np.diag(q.gram)
    for _ in range(max_moves):
        tmax = np.maximum.reduceat(p, first_rows)
        tmin = np.minimum.reduceat(p, first_rows)
        total = float((tmax - tmin).sum())
        a = best_offset(q, scale, p)
        grad = 2 * scale * scale * gp + 2 * a * scale * q.xw - 2 * scale * q.xwy
        up = grad + scale * scale * diag  # change of the error for +1 (offset held)
        down = -grad + scale * scale * diag  # for -1
        at_max = p >= tmax[term_of_row]
        at_min = p <= tmin[term_of_row]
        if total > max_total:
            return None  # independent rounding already breaks the limit: the caller tries a coarser scale
        # a move that widens a term's range is allowed only while the total range is below the limit
        up_ok = ~at_max | (total + 1 <= max_total)
        down_ok = (~at_min | (total + 1 <= max_total)) & (allow_negative | (p >= 1))
        up = np.where(up_ok, up, np.inf)
        down = np.where(down_ok, down, np.inf)
        j_up, j_down = int(np.argmin(up)), int(np.argmin(down))
        best = min(up[j_up], down[j_down])
        if not best < -1e-12 * max(1.0, q.yy):
            break
        j, step = (j_up, 1.0) if up[j_up] <= down[j_down] else (j_down, -1.0)
        p[j] += step
        gp += step * q.gram[:, j]
    if not allow_negative:  # each term's lowest row is 0; the offset absorbs the shift
        for t in range(n_terms):
            sel = term_of_row == t
            p[sel] -= p[sel].min()
    return p.astype(np.int64), best_offset(q, scale, p)
