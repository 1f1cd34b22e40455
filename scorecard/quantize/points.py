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


def weighted_error(q: Quadratic, scale: float, p: np.ndarray, offset: float) -> float:
    """sum_i w_i (offset + scale * (X p)_i - y_i)^2, from the Gram form."""
    p = np.asarray(p, dtype=float)
    return float(scale * scale * p @ q.gram @ p - 2 * scale * p @ q.xwy + 2 * offset * scale * q.xw @ p
                 + offset * offset * q.sw - 2 * offset * q.swy + q.yy)


def fit_scale_offset(q: Quadratic, p: np.ndarray) -> tuple[float, float] | None:
    """For fixed integer points, the scale s and offset a minimising sum_i w_i (a + s T_i - y_i)^2, where
    T_i is patient i's total points: the weighted least-squares line of the exact log-odds on the total
    (2 x 2 normal equations from the Gram form). None when every patient has the same total or the fitted
    scale is not positive (points must still mean more risk)."""
    p = np.asarray(p, dtype=float)
    st, stt, sty = float(q.xw @ p), float(p @ q.gram @ p), float(q.xwy @ p)
    det = q.sw * stt - st * st
    if det <= 1e-12 * max(1.0, q.sw * stt):
        return None
    scale = (q.sw * sty - st * q.swy) / det
    if not scale > 0:
        return None
    return scale, (q.swy - scale * st) / q.sw


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


def polish_points(q: Quadratic, p: np.ndarray, term_of_row: np.ndarray, scale: float, max_total: int,
                  allow_negative: bool = False, max_moves: int = 500) -> tuple[np.ndarray, float]:
    """Improve integer points beyond single-row moves: the best move of one row by +/-1 or of two rows by
    +/-1 each (the same or opposite ways), judged by the exact weighted error with the offset re-solved,
    repeated until no move lowers it. The offset is eliminated by centring the Gram form (X'WX minus its
    projection on the weighted mean), so a move's effect is a quadratic in the two rows alone; a pair move
    escapes the local minima of single moves, where one row can only improve if a correlated row
    compensates. Moves that would widen the total-points range beyond `max_total` are refused. Returns the
    points (each term's lowest row 0 unless negative points are allowed) and the offset."""
    p = np.asarray(p, dtype=float).copy()
    gc = q.gram - np.outer(q.xw, q.xw) / q.sw
    bc = q.xwy - q.xw * q.swy / q.sw
    s2 = scale * scale
    dg = np.diag(gc)
    first_rows = np.concatenate([[0], np.flatnonzero(np.diff(term_of_row)) + 1])
    tol = 1e-12 * max(1.0, q.yy)
    gp = gc @ p
    same = term_of_row[:, None] == term_of_row[None, :]
    for _ in range(max_moves):
        tmax = np.maximum.reduceat(p, first_rows)
        tmin = np.minimum.reduceat(p, first_rows)
        room = max_total - float((tmax - tmin).sum())
        g = 2 * s2 * gp - 2 * scale * bc
        widen = {1.0: (p >= tmax[term_of_row]).astype(float), -1.0: (p <= tmin[term_of_row]).astype(float)}
        best, move = -tol, None
        for dj in (1.0, -1.0):
            single = dj * g + s2 * dg
            single = np.where(widen[dj] <= room, single, np.inf)
            j = int(np.argmin(single))
            if single[j] < best:
                best, move = single[j], ((j, dj),)
            for dk in (1.0, -1.0):
                pair = (dj * g)[:, None] + (dk * g)[None, :] + s2 * (dg[:, None] + dg[None, :] + 2 * dj * dk * gc)
                # widening counted per term; two rows of one term moved apart can widen it by 2
                extra = widen[dj][:, None] + widen[dk][None, :]
                extra = np.where(same & (dj == dk), np.maximum(widen[dj][:, None], widen[dk][None, :]), extra)
                pair = np.where(extra <= room, pair, np.inf)
                np.fill_diagonal(pair, np.inf)
                flat = int(np.argmin(pair))
                if pair.flat[flat] < best:
                    j, k = divmod(flat, len(p))
                    best, move = pair.flat[flat], ((j, dj), (k, dk))
        if move is None:
            break
        for j, d in move:
            p[j] += d
            gp += d * gc[:, j]
    if not allow_negative:
        for t in range(int(term_of_row.max()) + 1):
            sel = term_of_row == t
            p[sel] -= p[sel].min()
    return p.astype(np.int64), best_offset(q, scale, p)
