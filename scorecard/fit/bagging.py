"""The whole fit: stage 1 on every bag, the pair ranking, stage 2 on every bag, purification, averaging.

Bags (outer bagging as in Lou et al. 2012/2013 and Caruana et al. KDD 2015): each bag draws its own
stratified held-out split from one seed, fits on the rest and stops early on its held-out rows. The final
term is the mean of the bags' terms and the per-bin standard deviation across bags is the shape's spread
band. Bags run in parallel processes; every bag's randomness comes from its own child of one
numpy SeedSequence and results are combined in bag order, so the result does not depend on the number of
cores.
"""

from __future__ import annotations

import multiprocessing
import os
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field, replace
from typing import Callable

import numpy as np

from scorecard.fit.boosting import BoostSettings, RowsInMemory, answer_with, one_feature_terms, pair_terms, split_rows
from scorecard.fit.pairs import PairScore, choose_pairs, pair_histogram_sums, rank_from_histograms
from scorecard.fit.purify import centre, purify_grid
from scorecard.sheet.printed import pair_name


@dataclass
class PairBins:
    first: int
    second: int
    maps: tuple[np.ndarray, np.ndarray]  # fine slot -> coarse bin (-1: not measured), per feature
    shape: tuple[int, int]


@dataclass
class FittedTerms:
    """Bag means (and spreads) of every term, centred, pairs purified."""

    intercept: float
    mains: list[np.ndarray]  # per feature, one value per slot (last slot: not measured)
    main_spread: list[np.ndarray]
    pairs: list[PairBins]
    pair_grids: list[np.ndarray]
    pair_spread: list[np.ndarray]
    slot_weight: list[np.ndarray]  # weighted training count per slot
    pair_weight: list[np.ndarray]
    ranking: list[PairScore] = field(default_factory=list)
    report: dict = field(default_factory=dict)


def usable_cores() -> int:
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except AttributeError:  # not on Linux
        return max(os.cpu_count() or 1, 1)


def bag_rows(y, settings: BoostSettings, bag_fraction: float, seed: np.random.SeedSequence):
    """(fitting rows, held-out rows) of one bag, from the outcome of every row and the bag's seed."""
    rng = np.random.default_rng(seed)
    fit_rows, held_rows = split_rows(y, settings.held_out_share, rng)
    if bag_fraction < 1.0 and len(fit_rows) > 0:
        keep = max(int(round(bag_fraction * len(fit_rows))), 1)
        fit_rows = np.sort(fit_rows[rng.permutation(len(fit_rows))[:keep]])
    return fit_rows, held_rows


class TableInMemory:
    """The fit's rows held in this process (codes per feature, outcome, weights): every per-row sum the fit
    needs. The Dask engine (`scorecard/fit/dask_engine.py`) answers the same questions from its partitions."""

    def __init__(self, codes: list[np.ndarray], y: np.ndarray, w: np.ndarray, n_jobs: int | None = None):
        self.codes, self.y, self.w, self.n_jobs = codes, y, w, n_jobs

    def outcome(self) -> np.ndarray:
        return self.y

    def weights(self) -> np.ndarray:
        return self.w

    def slot_weights(self, n_slots) -> list[np.ndarray]:
        return [np.bincount(c, weights=self.w, minlength=n) for c, n in zip(self.codes, n_slots)]

    def one_feature_source(self, rows, n_slots):
        fit_rows, held_rows = rows
        c, y, w = self.codes, self.y, self.w
        return RowsInMemory([x[fit_rows] for x in c], y[fit_rows], w[fit_rows],
                            [x[held_rows] for x in c], y[held_rows], w[held_rows], n_slots)

    def pair_source(self, rows, layouts, intercept, shapes):
        fit_rows, held_rows = rows
        codes = [pair_code(lay, self.codes) for lay in layouts]
        start = logodds_of(intercept, shapes, self.codes)
        y, w = self.y, self.w
        return RowsInMemory([c[fit_rows] for c in codes], y[fit_rows], w[fit_rows],
                            [c[held_rows] for c in codes], y[held_rows], w[held_rows],
                            [lay.shape[0] * lay.shape[1] + 1 for lay in layouts], start[fit_rows], start[held_rows])

    def pair_sums(self, intercept, shapes, coarse_maps, widths, half):
        """Pairs' half histograms at the one-feature model (`pairs.pair_histogram_sums`), sum w, sum w^2."""
        f = logodds_of(intercept, shapes, self.codes)
        p = 1.0 / (1.0 + np.exp(-f))
        w, y = self.w, self.y
        coarse = [m[c] for m, c in zip(coarse_maps, self.codes)]
        sums = pair_histogram_sums(coarse, widths, w * (p - y), w * p * (1 - p), w, half)
        return sums, np.sum(w), np.sum(w * w)

    def pair_weights(self, layouts) -> list[np.ndarray]:
        return [np.bincount(pair_code(lay, self.codes), weights=self.w, minlength=lay.shape[0] * lay.shape[1] + 1)[:-1].reshape(lay.shape)
                for lay in layouts]

    def out_of_bag(self, bag_models, layouts, held) -> tuple[np.ndarray, np.ndarray]:
        """Per row, the summed log-odds of the bags that held it out, and how many did."""
        pair_codes = [pair_code(lay, self.codes) for lay in layouts]
        oob_sum = np.zeros(len(self.y))
        oob_n = np.zeros(len(self.y))
        for (b_intercept, b_mains, b_grids), rows in zip(bag_models, held):
            held_codes = [c[rows] for c in self.codes]
            held_pairs = [c[rows] for c in pair_codes]
            oob_sum[rows] += logodds_of(b_intercept, b_mains, held_codes, b_grids, held_pairs)
            oob_n[rows] += 1
        return oob_sum, oob_n

    def run_bags(self, function, common: tuple, bags: list, progress, what) -> list[dict]:
        jobs = min(usable_cores() if self.n_jobs is None or self.n_jobs < 1 else self.n_jobs, len(bags))
        return _run(_fit_bag, (function, self, *common), bags, jobs, progress, what)


def _stage1_bag(table, n_slots, ordered, positions, settings, rows):
    """One bag's stage 1: its histogram source and the requests that fit it (`boosting.one_feature_terms`)."""
    return table.one_feature_source(rows, n_slots), one_feature_terms(n_slots, ordered, settings, positions)


def _stage2_bag(table, layouts, settings, bag):
    rows, intercept, shapes = bag
    return table.pair_source(rows, layouts, intercept, shapes), pair_terms([lay.shape for lay in layouts], settings)


def _fit_bag(bag, *arguments):
    """Open bag `bag` (`_stage1_bag` or `_stage2_bag`) and fit it here, one request at a time."""
    return answer_with(*bag(*arguments))


_SHARED: dict = {}  # the data of the stage being run, inherited by forked workers (never pickled)


def _call_shared(function, index):
    return function(*_SHARED["common"], _SHARED["seeds"][index])


def _run(function, common: tuple, seeds, n_jobs, progress, what):
    """Run `function(*common, seed)` for every bag seed, in bag order, reporting each bag.

    Workers are forked (Linux), so they inherit the arrays instead of receiving pickled copies, and start
    in milliseconds; results come back in bag order whichever worker ran them. Where forking is not possible
    (another OS, or inside a daemon worker such as a parallel cross-validation) the bags run in this process.
    """
    results = []
    use_fork = (
        n_jobs > 1 and len(seeds) > 1 and "fork" in multiprocessing.get_all_start_methods()
        and not multiprocessing.current_process().daemon
    )
    if use_fork:
        _SHARED.update(common=common, seeds=seeds)
        try:
            context = multiprocessing.get_context("fork")
            with ProcessPoolExecutor(max_workers=n_jobs, mp_context=context) as pool:
                stream = pool.map(_call_shared, [function] * len(seeds), range(len(seeds)))
                for i, result in enumerate(stream, start=1):
                    results.append(result)
                    if progress:
                        progress(f"{what}: repeat {i}/{len(seeds)} done, best at round {result['rounds']}")
        finally:
            _SHARED.clear()
        return results
    for i, seed in enumerate(seeds, start=1):
        results.append(function(*common, seed))
        if progress:
            progress(f"{what}: repeat {i}/{len(seeds)} done, best at round {results[-1]['rounds']}")
    return results


def _mean_held_loss(bags: list[dict]) -> float:
    """Mean held-out log-loss of the repeats at their best rounds (inf without held-out rows)."""
    losses = [b["held_loss"] for b in bags]
    return float(np.mean(losses)) if losses and np.all(np.isfinite(losses)) else np.inf


def logodds_of(intercept, mains, codes, grids=(), pair_codes=()):
    f = np.full(len(codes[0]) if codes else 0, float(intercept))
    for shape, c in zip(mains, codes):
        f += shape[c]
    for grid, c in zip(grids, pair_codes):
        f += np.append(np.ravel(grid), 0.0)[c]
    return f


def pair_code(layout: PairBins, codes) -> np.ndarray:
    """row * n_columns + column, or n_rows * n_columns when either feature is not measured."""
    r = layout.maps[0][codes[layout.first]]
    c = layout.maps[1][codes[layout.second]]
    n_rows, n_cols = layout.shape
    return np.where((r >= 0) & (c >= 0), r * n_cols + c, n_rows * n_cols).astype(np.intp)


def fit_additive_terms(
    table,
    n_slots: list[int],
    ordered: list[bool],
    coarse_maps: list[np.ndarray],
    settings: BoostSettings,
    n_bags: int,
    seed: int,
    pairs="auto",
    max_pairs: int = 3,
    alpha: float = 0.01,
    min_gain: float = 0.0,
    shrinkage_choices: tuple = (),
    trial_repeats: int = 8,
    positions: list | None = None,
    try_lines: bool = False,
    bag_fraction: float = 1.0,
    progress: Callable[[str], None] | None = None,
    names: list[str] | None = None,
) -> FittedTerms:
    """Fit every term on `table` (a `TableInMemory`, or the Dask engine's table); see the module doc for the
    method and its sources."""
    y = table.outcome()
    n_features = len(n_slots)
    seeds = np.random.SeedSequence(seed).spawn(n_bags)
    bag_splits = [bag_rows(y, settings, bag_fraction, s) for s in seeds]
    # candidates: (straight lines?, shrinkage); the lines, when tried, at the fit's own shrinkage
    candidates = [(False, float(v)) for v in (shrinkage_choices or (settings.l2,))]
    if try_lines and positions is not None:
        candidates.append((True, float(settings.l2)))
    trials = {}
    n_trial = max(1, min(trial_repeats, n_bags)) if len(candidates) > 1 else n_bags
    for lines, shrinkage in candidates:
        trial = replace(settings, l2=shrinkage, linear=lines)
        what = ("one-feature terms (a line plus steps)" if lines else f"one-feature terms (shrinkage {shrinkage:g})") \
            if len(candidates) > 1 else "one-feature terms"
        bags = table.run_bags(_stage1_bag, (n_slots, ordered, positions, trial), bag_splits[:n_trial], progress, what)
        trials[(lines, shrinkage)] = (_mean_held_loss(bags), bags)
    # the candidate whose repeats have the lowest mean held-out deviance (on a tie: steps before lines, the
    # smaller shrinkage); its trial repeats are kept and the rest of its repeats are fitted now
    chosen_lines, chosen_l2 = min(trials, key=lambda key: (trials[key][0], key))
    settings = replace(settings, l2=chosen_l2, linear=chosen_lines)
    stage1 = trials[(chosen_lines, chosen_l2)][1]
    if len(stage1) < n_bags:
        stage1 = stage1 + table.run_bags(_stage1_bag, (n_slots, ordered, positions, settings), bag_splits[len(stage1):],
                                         progress, "one-feature terms")
    if progress and len(candidates) > 1:
        progress(f"{'a line plus steps' if chosen_lines else f'shrinkage {chosen_l2:g}'} chosen by held-out deviance: "
                 + ", ".join(f"{'line plus steps' if k[0] else f'{k[1]:g}'}: {loss:.5f}" for k, (loss, _) in trials.items()))
    slot_weight = table.slot_weights(n_slots)

    # stage 2: rank pairs on the residuals of the bag-mean one-feature model
    mean_intercept = float(np.mean([b["intercept"] for b in stage1]))
    mean_shapes = [np.mean([b["shapes"][j] for b in stage1], axis=0) for j in range(n_features)]
    ranking: list[PairScore] = []
    chosen: list[PairScore] = []
    if pairs != 0 and pairs != "0" and n_features >= 2:
        widths = [int(m.max()) + 1 for m in coarse_maps]
        half = np.random.default_rng(np.random.SeedSequence([seed, 2013])).random(len(y)) < 0.5
        sums, weight, weight_squared = table.pair_sums(mean_intercept, mean_shapes, coarse_maps, widths, half)
        ranking = rank_from_histograms(sums, weight, weight_squared, settings.l2, settings.min_leaf)
        chosen = choose_pairs(ranking, pairs, max_pairs, alpha, min_gain)
        if progress:
            label = names or [str(j) for j in range(n_features)]
            picked = ", ".join(pair_name([label[s.first], label[s.second]]) for s in chosen) or "none"
            progress(f"pairs: ranked {len(ranking)} by FAST gain; chosen: {picked}")
    layouts = [
        PairBins(s.first, s.second, (coarse_maps[s.first], coarse_maps[s.second]),
                   (int(coarse_maps[s.first].max()) + 1, int(coarse_maps[s.second].max()) + 1))
        for s in chosen
    ]
    pair_weight = table.pair_weights(layouts)
    if layouts:
        bag_inputs = [(rows, b["intercept"], b["shapes"]) for rows, b in zip(bag_splits, stage1)]
        stage2 = table.run_bags(_stage2_bag, (layouts, settings), bag_inputs, progress, "pair terms")
    else:
        stage2 = [{"grids": [], "rounds": 0, "held_loss": b["held_loss"]} for b in stage1]

    # every bag: purify its pairs into its one-feature terms, centre everything, then average the bags
    bag_models = []
    for b1, b2 in zip(stage1, stage2):
        intercept = b1["intercept"]
        mains = [s.copy() for s in b1["shapes"]]
        grids = []
        for lay, grid, weight in zip(layouts, b2["grids"], pair_weight):
            pure, row, column = purify_grid(grid, weight)
            for axis, part in ((0, row), (1, column)):
                feature = lay.first if axis == 0 else lay.second
                fine_to_coarse = lay.maps[axis]
                mains[feature] += np.where(fine_to_coarse >= 0, part[np.clip(fine_to_coarse, 0, None)], 0.0)
            grids.append(pure)
        for j in range(len(mains)):
            mains[j], mean = centre(mains[j], slot_weight[j])
            intercept += mean
        bag_models.append((intercept, mains, grids))

    ddof = 1 if n_bags > 1 else 0
    mains = [np.mean([m[1][j] for m in bag_models], axis=0) for j in range(n_features)]
    spread = [np.std([m[1][j] for m in bag_models], axis=0, ddof=ddof) for j in range(n_features)]
    grids = [np.mean([m[2][k] for m in bag_models], axis=0) for k in range(len(layouts))]
    grid_spread = [np.std([m[2][k] for m in bag_models], axis=0, ddof=ddof) for k in range(len(layouts))]
    intercept = float(np.mean([m[0] for m in bag_models]))

    # held-out figures: each row predicted by the bags that did not fit it (out-of-bag)
    oob_sum, oob_n = table.out_of_bag(bag_models, layouts, [held for _, held in bag_splits])
    report = {
        "shrinkage": chosen_l2,
        "shapes": "line plus steps" if chosen_lines else "steps",
        "shrinkage_held_out_log_loss": {f"{k[1]:g}": float(loss) for k, (loss, _) in trials.items() if not k[0]} if shrinkage_choices else None,
        "line_plus_steps_held_out_log_loss": next((float(loss) for k, (loss, _) in trials.items() if k[0]), None),
        "rounds_one_feature": [int(b["rounds"]) for b in stage1],
        "rounds_pairs": [int(b["rounds"]) for b in stage2],
        "held_out_log_loss": [float(b["held_loss"]) for b in stage2],
        "oob_rows": oob_n > 0,
        "oob_logodds": np.divide(oob_sum, oob_n, out=np.zeros_like(oob_sum), where=oob_n > 0),
    }
    return FittedTerms(intercept, mains, spread, layouts, grids, grid_spread, slot_weight, pair_weight, ranking, report)
