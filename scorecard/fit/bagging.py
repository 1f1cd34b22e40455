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
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from scorecard.fit.boosting import BoostSettings, boost_one_feature_terms, boost_pair_terms, split_rows
from scorecard.fit.pairs import PairScore, choose_pairs, rank_pairs
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


def _bag_rows(y, settings: BoostSettings, bag_fraction: float, seed: np.random.SeedSequence):
    rng = np.random.default_rng(seed)
    fit_rows, held_rows = split_rows(y, settings.validation_fraction, rng)
    if bag_fraction < 1.0 and len(fit_rows) > 0:
        keep = max(int(round(bag_fraction * len(fit_rows))), 1)
        fit_rows = np.sort(fit_rows[rng.permutation(len(fit_rows))[:keep]])
    return fit_rows, held_rows


def _stage1_bag(codes, y, w, n_slots, ordered, settings, bag_fraction, seed):
    fit_rows, held_rows = _bag_rows(y, settings, bag_fraction, seed)
    return boost_one_feature_terms(
        [c[fit_rows] for c in codes], y[fit_rows], w[fit_rows],
        [c[held_rows] for c in codes], y[held_rows], w[held_rows],
        n_slots, ordered, settings,
    )


def _stage2_bag(pair_codes, y, w, shapes, settings, bag_fraction, bag):
    start, seed = bag
    fit_rows, held_rows = _bag_rows(y, settings, bag_fraction, seed)
    return boost_pair_terms(
        [c[fit_rows] for c in pair_codes], start[fit_rows], y[fit_rows], w[fit_rows],
        [c[held_rows] for c in pair_codes], start[held_rows], y[held_rows], w[held_rows],
        shapes, settings,
    )


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
                        progress(f"{what}: bag {i}/{len(seeds)} done, best at round {result['rounds']}")
        finally:
            _SHARED.clear()
        return results
    for i, seed in enumerate(seeds, start=1):
        results.append(function(*common, seed))
        if progress:
            progress(f"{what}: bag {i}/{len(seeds)} done, best at round {results[-1]['rounds']}")
    return results


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
    codes: list[np.ndarray],
    y: np.ndarray,
    w: np.ndarray,
    n_slots: list[int],
    ordered: list[bool],
    coarse_maps: list[np.ndarray],
    settings: BoostSettings,
    n_bags: int,
    seed: int,
    pairs="auto",
    max_pairs: int = 3,
    alpha: float = 0.01,
    bag_fraction: float = 1.0,
    n_jobs: int | None = None,
    progress: Callable[[str], None] | None = None,
    names: list[str] | None = None,
) -> FittedTerms:
    """Fit every term; see the module doc for the method and its sources."""
    jobs = min(usable_cores() if n_jobs is None or n_jobs < 1 else n_jobs, n_bags)
    seeds = np.random.SeedSequence(seed).spawn(n_bags)
    stage1 = _run(_stage1_bag, (codes, y, w, n_slots, ordered, settings, bag_fraction), seeds, jobs, progress, "one-feature terms")
    slot_weight = [np.bincount(c, weights=w, minlength=n) for c, n in zip(codes, n_slots)]

    # stage 2: rank pairs on the residuals of the bag-mean one-feature model
    mean_intercept = float(np.mean([b["intercept"] for b in stage1]))
    mean_shapes = [np.mean([b["shapes"][j] for b in stage1], axis=0) for j in range(len(codes))]
    f = logodds_of(mean_intercept, mean_shapes, codes)
    p = 1.0 / (1.0 + np.exp(-f))
    ranking: list[PairScore] = []
    chosen: list[PairScore] = []
    if pairs != 0 and pairs != "0" and len(codes) >= 2:
        coarse = [m[c] for m, c in zip(coarse_maps, codes)]
        widths = [int(m.max()) + 1 for m in coarse_maps]
        half = np.random.default_rng(np.random.SeedSequence([seed, 2013])).random(len(y)) < 0.5
        ranking = rank_pairs(coarse, widths, w * (p - y), w * p * (1 - p), w, half, settings.l2, settings.min_leaf)
        chosen = choose_pairs(ranking, pairs, max_pairs, alpha)
        if progress:
            label = names or [str(j) for j in range(len(codes))]
            picked = ", ".join(pair_name([label[s.first], label[s.second]]) for s in chosen) or "none"
            progress(f"pairs: ranked {len(ranking)} by FAST gain; chosen: {picked}")
    layouts = [
        PairBins(s.first, s.second, (coarse_maps[s.first], coarse_maps[s.second]),
                   (int(coarse_maps[s.first].max()) + 1, int(coarse_maps[s.second].max()) + 1))
        for s in chosen
    ]
    pair_codes = [pair_code(lay, codes) for lay in layouts]
    pair_weight = [np.bincount(pc, weights=w, minlength=lay.shape[0] * lay.shape[1] + 1)[:-1].reshape(lay.shape) for pc, lay in zip(pair_codes, layouts)]
    if layouts:
        starts = [logodds_of(b["intercept"], b["shapes"], codes) for b in stage1]
        bag_inputs = [(start, seed) for start, seed in zip(starts, seeds)]
        common = (pair_codes, y, w, [lay.shape for lay in layouts], settings, bag_fraction)
        stage2 = _run(_stage2_bag, common, bag_inputs, jobs, progress, "pair terms")
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
    mains = [np.mean([m[1][j] for m in bag_models], axis=0) for j in range(len(codes))]
    spread = [np.std([m[1][j] for m in bag_models], axis=0, ddof=ddof) for j in range(len(codes))]
    grids = [np.mean([m[2][k] for m in bag_models], axis=0) for k in range(len(layouts))]
    grid_spread = [np.std([m[2][k] for m in bag_models], axis=0, ddof=ddof) for k in range(len(layouts))]
    intercept = float(np.mean([m[0] for m in bag_models]))

    # held-out figures: each row predicted by the bags that did not fit it (out-of-bag)
    oob_sum = np.zeros(len(y))
    oob_n = np.zeros(len(y))
    for (b_intercept, b_mains, b_grids), s in zip(bag_models, seeds):
        _, held = _bag_rows(y, settings, bag_fraction, s)
        held_codes = [c[held] for c in codes]
        held_pairs = [c[held] for c in pair_codes]
        oob_sum[held] += logodds_of(b_intercept, b_mains, held_codes, b_grids, held_pairs)
        oob_n[held] += 1
    report = {
        "rounds_one_feature": [int(b["rounds"]) for b in stage1],
        "rounds_pairs": [int(b["rounds"]) for b in stage2],
        "held_out_log_loss": [float(b["held_loss"]) for b in stage2],
        "oob_rows": oob_n > 0,
        "oob_logodds": np.divide(oob_sum, oob_n, out=np.zeros_like(oob_sum), where=oob_n > 0),
    }
    return FittedTerms(intercept, mains, spread, layouts, grids, grid_spread, slot_weight, pair_weight, ranking, report)
