"""From an additive model to a sheet document: the search for the simplest sheet that meets the bound.

1. pieces: every term's curve is split into pieces, cut only at readable values (`curves`, `nice`);
2. allocation for the per-patient error: from one row per term, rows are added where they lower the whole
   sheet's weighted per-patient error most, each term re-segmented by the exact DP (`segment`) against the
   partial residual the other terms leave (`backfit`); this gives a path of ever larger sheets;
3. refit: all row values of a sheet are refitted jointly (`refit`);
4. scale and points: a points scale and integer points, improved beyond independent rounding (`points`);
5. judge: every bound set (`Bound.misses` on `accuracy.quick_figures`), on the patients the sheet is chosen
   on and on a held-out part (`split_populations`).
The smallest sheet on the path that passes is found by bisection, then the smallest total-points range for
it; the figures are measured in full on the held-out part, the certificate computed (`certificate`), the
spread per total and per band added, the frontier of alternatives recorded and the document assembled.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, replace
from typing import Callable

import numpy as np
import pandas as pd
from threadpoolctl import threadpool_limits

from scorecard import __version__
from scorecard.errors import CheckFailed, UserError
from scorecard.model import AdditiveModel, logistic
from scorecard.quantize.allocate import allocate_rows
from scorecard.quantize.band_edges import best_band_edges
from scorecard.quantize.backfit import Backfit, smallest_plans
from scorecard.quantize.certificate import certificate
from scorecard.quantize.curves import ContinuousCurve, Curve, RowPlan, LevelCurve, build_curves
from scorecard.quantize.accuracy import full_figures, quick_figures, expected_auc
from scorecard.quantize.nice import MAX_CANDIDATES
from scorecard.quantize.population import Population, evaluation_population
from scorecard.quantize.points import Quadratic, fit_scale_offset, polish_points, round_points, weighted_error
from scorecard.quantize.refit import refit_row_values
from scorecard.sheet.slips import slip_figures
from scorecard.sheet import CAUTIONS, ROUNDING_RULE, band_indices, risk_text, total_band_indices
from scorecard.sheet.printed import pair_effect_name

PLACEHOLDER_WORDING = "Write your unit's agreed action here (local protocol)."


@dataclass
class Bound:
    """The methodologist's bound and the limits of the paper.

    Population bounds: ΔAUC at most `max_auc_loss`, at most `risk_error_share` of patients misstated by more
    than `max_risk_error`. Per-patient bounds (None = not bounded): band agreement at least
    `min_band_agreement` (used whenever the sheet has bands), the `risk_error_percentile`-th percentile of
    |Δrisk| at most `max_percentile_risk_error`, the largest |Δrisk| at most `max_largest_risk_error`, and the
    certificate's worst case at most `max_certificate_risk_error`. Paper limits: `max_rows` per term (and per
    pair axis), `max_total_points`. `max_row_error` caps, in log-odds, how far any row may be from the model's
    curve anywhere in the training range before the joint refit. Why these defaults: docs/quantization.md."""

    max_auc_loss: float = 0.01
    max_risk_error: float = 0.10
    risk_error_share: float = 0.05
    max_rows: int = 8
    max_total_points: int = 100  # the scale APACHE II / SAPS II use at the bedside; measured, docs/quantization.md
    max_row_error: float = 1.0
    min_band_agreement: float | None = 0.90
    risk_error_percentile: float = 95.0
    max_percentile_risk_error: float | None = 0.07
    max_largest_risk_error: float | None = None  # opt-in: one cohort's worst patient is too unstable to promise by default
    max_certificate_risk_error: float | None = None

    def check(self) -> None:
        if not 0 <= self.max_auc_loss < 1:
            raise UserError(f"--max-auc-loss {self.max_auc_loss}: give a number from 0 to 1 (e.g. 0.005)")
        if not 0 < self.max_risk_error < 1:
            raise UserError(f"--max-risk-error {self.max_risk_error}: give a fraction above 0 and below 1 (0.05 = 5 percentage points)")
        if not 0 <= self.risk_error_share <= 1:
            raise UserError(f"--risk-error-share {self.risk_error_share}: give a fraction from 0 to 1 (0.05 = 5 % of patients)")
        if self.max_rows < 1:
            raise UserError(f"--max-rows {self.max_rows}: give a whole number of at least 1")
        if self.max_total_points < 1:
            raise UserError(f"--max-total-points {self.max_total_points}: give a whole number of at least 1")
        if not self.max_row_error > 0:
            raise UserError(f"--max-row-error {self.max_row_error}: give a positive number of log-odds (e.g. 0.5)")
        if self.min_band_agreement is not None and not 0 <= self.min_band_agreement <= 1:
            raise UserError(f"--min-band-agreement {self.min_band_agreement}: give a share from 0 to 1 (0.95 = 95 % of patients), or none")
        if not 0 < self.risk_error_percentile <= 100:
            raise UserError(f"--risk-error-percentile {self.risk_error_percentile}: give a percentile above 0 and at most 100 (e.g. 95)")
        for option, value in (("--max-percentile-risk-error", self.max_percentile_risk_error),
                              ("--max-largest-risk-error", self.max_largest_risk_error),
                              ("--max-certificate-risk-error", self.max_certificate_risk_error)):
            if value is not None and not 0 < value <= 1:
                raise UserError(f"{option} {value}: give a fraction above 0 and at most 1 (0.05 = 5 percentage points), or none")

    def for_bands(self, bands: list[dict]) -> "Bound":
        """The bound as it applies to a sheet with these bands: no band agreement without bands."""
        return self if bands else replace(self, min_band_agreement=None)

    def misses(self, figs: dict) -> list[str]:
        """Names of the bounds `figs` (see `accuracy.quick_figures`) does not meet; empty when all are met. On a
        held-out part (figures with `limits`) the shares and the percentile are judged at their one-sided
        confidence limits, so a sheet offered as meeting a bound keeps a margin for the next patients."""
        out = []
        at = _judged(figs)
        if figs["auc_loss"] > self.max_auc_loss:
            out.append("auc_loss")
        # a share bound of 0 (no patient misstated) asks for exactness on the patients seen, which no confidence
        # limit of a share can certify: it is judged at the share itself
        share = figs["share_over_risk_error"] if self.risk_error_share == 0 else at("share_over_risk_error")
        if share > self.risk_error_share:
            out.append("risk_error_share")
        if self.min_band_agreement is not None and figs.get("band_agreement") is not None \
                and at("band_agreement") < self.min_band_agreement:
            out.append("band_agreement")
        if self.max_percentile_risk_error is not None and at("percentile_abs_risk_error") > self.max_percentile_risk_error:
            out.append("percentile_risk_error")
        if self.max_largest_risk_error is not None and figs["max_abs_risk_error"] > self.max_largest_risk_error:
            out.append("largest_risk_error")
        return out

    def document(self) -> dict:
        """The sheet's `bound` block (the row cap is a setting of the search, recorded in provenance)."""
        return {k: v for k, v in asdict(self).items() if k != "max_row_error"}


def _judged(figs: dict):
    """The figure a bound is judged at: its confidence limit when the figures carry limits (held out)."""
    limits = figs.get("limits") or {}
    return lambda key: limits[key] if limits.get(key) is not None else figs[key]


@dataclass
class Candidate:
    budget: int
    choice: list[int]
    layouts: list[RowPlan]
    points: list[np.ndarray]
    scale: float
    offset: float
    sheet_logodds: np.ndarray
    figures: dict
    total_range: int
    passed: bool
    confirm_figures: dict | None = None  # on the held-out part, when there is one
    confirm_logodds: np.ndarray | None = None
    band_edges: list[int] | None = None  # first total (sum of these points) of each band, from `band_edges`


@dataclass
class Problem:
    """Everything fixed before the search: the population, the curves and their options."""

    model: AdditiveModel
    population: Population
    curves: list[Curve]
    options: list[list]
    weight: np.ndarray
    auc_model: float
    bound: Bound
    allow_negative: bool
    bands: list[dict] = field(default_factory=list)
    tried: list[dict] = field(default_factory=list)
    design: "Design | None" = None  # the chosen allocation, set by `search`
    confirm: Population | None = None  # held-out patients: a sheet is offered only if it meets the bound there too
    confirm_curves: list[Curve] | None = None
    steps: list = field(default_factory=list)  # the allocation path (backfit.Step), set by `allocation_path`
    frontier: list = field(default_factory=list)  # alternative sheets (`frontier`)
    slip_choice: list = field(default_factory=list)  # the roundings the chosen sheet was picked among (`_finish`)
    band_edge_search: bool = True  # band edges at the totals that maximise band agreement (`band_edges`)

    def figures(self, sheet_logodds: np.ndarray, held_out: bool = False, sheet_band: np.ndarray | None = None) -> dict:
        """The figures the bound is judged on, for sheet log-odds on the patients choosing the sheet (or on
        the held-out part); `sheet_band` is each patient's band by total when the band edges were searched."""
        pop = self.confirm if held_out else self.population
        return quick_figures(pop.logodds, sheet_logodds, self.bound.max_risk_error, None if held_out else self.auc_model,
                             self.bands, self.bound.risk_error_percentile, sheet_band, limits=held_out)

    def model_band(self, held_out: bool = False) -> np.ndarray:
        return band_indices(self.bands, (self.confirm if held_out else self.population).risk)

    def judge(self, design: "Design", pts: np.ndarray, scale: float, offset: float, held_out: bool = True):
        """(band edges, figures on the choosing part, figures held out or None) of points on a design: the band
        edges are searched on the choosing part's totals and applied unchanged to the held-out part."""
        totals = pts[design.ids].sum(axis=1)
        edges = self.band_edges(design, pts, scale, offset, totals)
        figs = self.figures(offset + scale * totals, sheet_band=_bands_of(edges, totals))
        held = None
        if held_out and self.confirm is not None:
            confirm_totals = pts[design.confirm_ids].sum(axis=1)
            held = self.figures(offset + scale * confirm_totals, held_out=True, sheet_band=_bands_of(edges, confirm_totals))
        return edges, figs, held

    def band_edges(self, design: "Design", pts: np.ndarray, scale: float, offset: float, totals: np.ndarray) -> list[int] | None:
        """First total of each band (totals as sums of these points), chosen for band agreement on the choosing
        part (`best_band_edges`; ties to where the printed risks cross the band limits); None without bands or
        without the search (then a total's band is that of its printed risk)."""
        if not self.bands or not self.band_edge_search:
            return None
        s = design.starts
        lo = int(sum(pts[s[t]:s[t + 1]].min() for t in range(len(s) - 1)))
        hi = int(sum(pts[s[t]:s[t + 1]].max() for t in range(len(s) - 1)))
        risk = logistic(offset + scale * np.arange(lo, hi + 1, dtype=float))
        preferred = [lo] + [lo + int(np.searchsorted(risk, b["upper_risk"], side="left")) for b in self.bands[:-1]]
        return best_band_edges(totals, self.model_band(), len(self.bands), lo, hi, preferred)


def _bands_of(edges: list[int] | None, totals: np.ndarray) -> np.ndarray | None:
    """Band of each total under these edges (None: no searched edges)."""
    if edges is None:
        return None
    return np.searchsorted(np.asarray(edges[1:], dtype=np.int64), totals, side="right")


def _design(problem: Problem, layouts: list[RowPlan]):
    """Global row ids per patient, the term of each row, and each row's own-curve value."""
    starts = np.cumsum([0] + [lay.n_rows for lay in layouts])
    ids = np.empty((problem.population.size, len(layouts)), dtype=np.int64)
    v0 = np.zeros(starts[-1])
    term_of_row = np.zeros(starts[-1], dtype=np.int64)
    for t, (curve, lay) in enumerate(zip(problem.curves, layouts)):
        ids[:, t] = starts[t] + lay.row_of_piece[curve.patient_piece]
        w = curve.piece_weights(problem.weight)
        sw = np.bincount(lay.row_of_piece, weights=w, minlength=lay.n_rows)
        ss = np.bincount(lay.row_of_piece, weights=w * curve.scores, minlength=lay.n_rows)
        v0[starts[t]:starts[t + 1]] = ss / sw
        term_of_row[starts[t]:starts[t + 1]] = t
    return ids, v0, term_of_row, starts


def _points_for_total(q: Quadratic, values, term_of_row, span: float, target: int, allow_negative: bool,
                      polish: bool = False):
    """Best (scale, (points, offset)) whose total-points range is at most `target`.

    Scales on a grid at and below span / target are each rounded and improved by single-row moves. With
    `polish` (the chosen sheet, after the row search), the best points are improved further by pair moves
    (`polish_points`), and the scale and offset refitted jointly by weighted least squares (`fit_scale_offset`: the offset is a
    free continuous parameter and the scale need not be the one rounded at), and the points re-rounded at
    the fitted scale, until the weighted error stops falling. The smallest weighted error is kept."""
    best = None

    def consider(scale, got):
        nonlocal best
        err = weighted_error(q, scale, *got)
        if best is None or err < best[0] - 1e-12 * max(1.0, q.yy):
            best = (err, scale, got)
            return True
        return False

    for shrink in _SHRINKS:
        scale = span / (target * shrink)
        got = round_points(q, values, term_of_row, scale, target, allow_negative)
        if got is not None:
            consider(scale, got)
    if best is None or not polish:
        return None if best is None else best[1:]
    _, scale, (pts, _offset) = best
    consider(scale, polish_points(q, pts, term_of_row, scale, target, allow_negative))
    for _ in range(4):
        _, scale, (pts, _offset) = best
        fitted = fit_scale_offset(q, pts)
        if fitted is None or not consider(fitted[0], (pts, fitted[1])):
            break
        again = round_points(q, values, term_of_row, fitted[0], target, allow_negative)
        if again is not None:
            again = polish_points(q, again[0], term_of_row, fitted[0], target, allow_negative)
        if again is None or not consider(fitted[0], again):
            break
    return best[1:]


# scales tried, as shares of span / target
_SHRINKS = (1.0, 0.93, 0.85, 0.7, 0.5)


def _span(values, term_of_row) -> float:
    n_terms = int(term_of_row.max()) + 1
    return float(sum(np.ptp(values[term_of_row == t]) for t in range(n_terms)))


@dataclass
class Design:
    """One allocation of rows, its refitted row values and the Gram form of its error."""

    budget: int
    choice: list[int]
    layouts: list[RowPlan]
    ids: np.ndarray
    starts: np.ndarray
    term_of_row: np.ndarray
    q: Quadratic
    values: np.ndarray
    span: float
    confirm_ids: np.ndarray | None = None


def design_of(problem: Problem, layouts: list[RowPlan], budget: int, choice: list[int] | None = None) -> Design:
    """The design of these row plans: row ids per patient (choosing and held-out), jointly refitted values."""
    ids, v0, term_of_row, starts = _design(problem, layouts)
    q = Quadratic.from_rows(ids, starts, problem.population.logodds, problem.weight)
    values, _ = refit_row_values(q, v0)
    span = _span(values, term_of_row)
    confirm_ids = None
    if problem.confirm is not None:
        confirm_ids = np.stack([starts[t] + lay.row_of_piece[c.patient_piece]
                                for t, (c, lay) in enumerate(zip(problem.confirm_curves, layouts))], axis=1)
    return Design(budget, choice or [], layouts, ids, starts, term_of_row, q, values, span if span > 0 else 1.0, confirm_ids)


def _allocate(problem: Problem, budget: int) -> Design | None:
    choice = allocate_rows(problem.options, budget)
    if choice is None:
        return None
    return design_of(problem, [problem.options[t][i].layout for t, i in enumerate(choice)], budget, choice)


def _attempt(problem: Problem, design: Design, target: int, polish: bool = False) -> Candidate | None:
    """Points for one allocation with total-points range at most `target`, and whether they pass."""
    found = _points_for_total(design.q, design.values, design.term_of_row, design.span, target, problem.allow_negative,
                              polish)
    if found is None:
        return None
    bound = problem.bound
    scale, (pts, offset) = found
    sheet = offset + scale * pts[design.ids].sum(axis=1)
    edges, figs, _ = problem.judge(design, pts, scale, offset, held_out=False)
    passed = not bound.misses(figs)
    confirm_figs = confirm_lo = None
    if problem.confirm is not None and (passed or polish):
        confirm_lo = offset + scale * pts[design.confirm_ids].sum(axis=1)
        confirm_figs = problem.judge(design, pts, scale, offset)[2]
        passed = passed and not bound.misses(confirm_figs)
    s = design.starts
    per_term = [pts[s[t]:s[t + 1]] for t in range(len(design.layouts))]
    total_range = int(sum(np.ptp(p) for p in per_term))
    problem.tried.append({"row_budget": design.budget, "total_points_target": target, "scale": scale,
                          "auc_loss": figs["auc_loss"], "share_over_risk_error": figs["share_over_risk_error"],
                          "held_out_checked": confirm_figs is not None, "passed": passed})
    return Candidate(design.budget, design.choice, design.layouts, per_term, scale, offset, sheet, figs, total_range, passed,
                     confirm_figs, confirm_lo, edges)


def _evaluate(problem: Problem, budget: int) -> tuple[Design, Candidate] | None:
    """The sheet with at most `budget` rows at the largest total allowed (the most accurate for those rows)."""
    design = _allocate(problem, budget)
    if design is None:
        return None
    return design, _attempt(problem, design, problem.bound.max_total_points)


def _smallest_total(problem: Problem, design: Design, top: Candidate) -> Candidate:
    """Bisection on the total-points target: the smallest range that still passes."""
    lo, hi, best = 1, problem.bound.max_total_points, top
    while lo < hi:
        mid = (lo + hi) // 2
        cand = _attempt(problem, design, mid)
        if cand is not None and cand.passed:
            best, hi = cand, mid
        else:
            lo = mid + 1
    return best


HOLD_OUT_SHARE = 1 / 3  # of a cohort, held out to confirm the chosen sheet (seeded split)
MIN_HOLD_OUT_COHORT = 300  # a smaller cohort is used whole (its held-out part would be too small to judge)
SYNTHETIC_HELD_OUT = 10000  # without a cohort: a second synthetic draw of this size confirms the sheet


def split_populations(model: AdditiveModel, data: pd.DataFrame | None, hold_out: bool = True,
                      seed: int = 0) -> tuple[Population, Population | None]:
    """The patients the sheet is chosen on and the held-out ones it is confirmed on (None without a hold-out):
    with a cohort, a seeded random third of its patients is held out; without one, the synthetic population
    of the model's bin counts chooses and a second, independent synthetic draw confirms."""
    if not hold_out:
        return evaluation_population(model, data), None
    if data is None:
        return (evaluation_population(model, None),
                evaluation_population(model, None, size=SYNTHETIC_HELD_OUT, seed=seed + 1,
                                      description=f"a second synthetic population of {SYNTHETIC_HELD_OUT} (seed {seed + 1}), "
                                                  "not used to choose the rows"))
    if len(data) < MIN_HOLD_OUT_COHORT:
        return evaluation_population(model, data), None
    # a stream of its own: a generator seeded like the cohort's (seed 0 for the demo) would draw the same
    # uniforms the cohort was made from, and the split would follow the patients' risk
    rng = np.random.default_rng(np.random.SeedSequence([seed, 0x4E1D0]))
    held = np.zeros(len(data), dtype=bool)
    held[rng.permutation(len(data))[: int(round(len(data) * HOLD_OUT_SHARE))]] = True
    n = len(data)
    choose = data.loc[~held].reset_index(drop=True)
    confirm = data.loc[held].reset_index(drop=True)
    return (evaluation_population(model, choose, description=f"{len(choose)} of the cohort's {n} patients (the part not held out)"),
            evaluation_population(model, confirm, description=f"{len(confirm)} held-out patients of the cohort's {n} "
                                                              f"(a seeded random third, not used to choose the rows)"))


def prepare(model: AdditiveModel, data: pd.DataFrame | None = None, bound: Bound | None = None,
            allow_negative: bool = False, population: Population | None = None,
            max_candidates: int = MAX_CANDIDATES, bands: list[dict] | None = None, hold_out: bool = False,
            band_edge_search: bool = True, band_edge_weight: float | None = None) -> Problem:
    """Everything the search needs. With `hold_out` (and no `population` given) the sheet is chosen on one
    part of the patients and confirmed on the other (`split_populations`)."""
    bands = list(bands or [])
    bound = (bound or Bound()).for_bands(bands)
    bound.check()
    if not model.terms:
        raise UserError("the model has no terms; there is nothing to put on a sheet")
    confirm = None
    if population is None:
        population, confirm = split_populations(model, data, hold_out)
    p = population.risk
    weight = p * (1 - p) * edge_weight_factor(population.logodds, bands,
                                              BAND_EDGE_WEIGHT if band_edge_weight is None else band_edge_weight)
    curves = build_curves(model, population.frame, max_candidates)
    options = [c.options(weight, bound.max_rows, bound.max_row_error) for c in curves]
    auc_model = expected_auc(p, population.logodds)
    problem = Problem(model, population, curves, options, weight, auc_model, bound, allow_negative, bands,
                      band_edge_search=band_edge_search)
    if confirm is not None:
        problem.confirm = confirm
        problem.confirm_curves = build_curves(model, confirm.frame, max_candidates)
    return problem


BAND_EDGE_WEIGHT = 0.0  # extra weight at a band limit (see edge_weight_factor); measured in docs/quantization.md
BAND_EDGE_WIDTH = 0.25  # log-odds: how far from a band limit the extra weight reaches (a Gaussian's sd)


def edge_weight_factor(logodds: np.ndarray, bands: list[dict], extra: float) -> np.ndarray:
    """1 + extra x exp(-d^2 / 2 BAND_EDGE_WIDTH^2), d the log-odds distance from the nearest band limit: a
    patient whose model risk is near a band limit changes band with a small error, so the row search and the
    rounding are asked to get them nearer (1 everywhere without bands or with extra 0)."""
    limits = [b["upper_risk"] for b in bands if b.get("upper_risk") is not None]
    if not limits or extra == 0:
        return np.ones_like(logodds)
    z = np.log(np.array(limits) / (1 - np.array(limits)))
    d = np.min(np.abs(np.asarray(logodds)[:, None] - z[None, :]), axis=1)
    return 1.0 + extra * np.exp(-0.5 * (d / BAND_EDGE_WIDTH) ** 2)


def allocation_path(problem: Problem) -> list:
    """The per-patient allocation path (`backfit.Step`s, from the fewest rows up to every term's limit) for the
    problem's bound: worked out once and kept on the problem."""
    if not problem.steps:
        bound = problem.bound
        fit = Backfit(problem.curves, problem.population.logodds, problem.weight, bound.max_rows, bound.max_row_error)
        problem.steps = fit.path(smallest_plans(problem.curves, problem.weight, bound.max_row_error, bound.max_rows))
    return problem.steps


def search(problem: Problem, progress: Callable[[str], None] | None = None) -> Candidate:
    """The simplest passing candidate on the per-patient allocation path (`backfit`): the smallest sheet on
    the path that meets every bound (bisection along the path, each sheet judged at the largest total
    allowed), then the smallest total-points range for it. With a held-out part, a sheet passes only if it
    meets the bound there as well, so one that just meets it in sample and misses it held out is not offered."""
    say = progress or (lambda _m: None)
    bound = problem.bound
    steps = allocation_path(problem)
    say(f"backfitting path: {len(steps)} sheets from {steps[0].printed} to {steps[-1].printed} printed rows over "
        f"{len(problem.curves)} terms, each row given where it lowers the per-patient error most")
    cache: dict[int, tuple[Design, Candidate | None]] = {}

    def judge(k: int, polish: bool = False) -> tuple[Design, Candidate | None]:
        if k not in cache or polish:
            design = design_of(problem, steps[k].plans, steps[k].printed)
            cache[k] = (design, _attempt(problem, design, bound.max_total_points, polish=polish))
        return cache[k]

    def ok(k: int) -> bool:
        cand = judge(k)[1]
        return cand is not None and cand.passed

    top = len(steps) - 1
    if not ok(top):
        # before calling the bound out of reach, give the largest sheet the full rounding: the quick one
        # can miss by a hair
        judge(top, polish=True)
    if not ok(top):
        # the path optimises the per-patient error, not ΔAUC: before calling the bound out of reach, try the
        # allocation by each term's own error too (e.g. the demo's true model with --max-row-error 0.5: the
        # path's largest sheet misses ΔAUC 0.01 by 0.0007, the term-error sheet meets it)
        try:
            return search_by_term_error(problem, progress)
        except CheckFailed:
            pass
        problem.frontier = frontier(problem)
        # nearest: the fewest rows plus points among the sheets that meet the bound
        nearest = min((f for f in problem.frontier if f["meets_bound"]), default=None,
                      key=lambda f: (f["printed_rows"] + f["total_points"], f["printed_rows"]))
        message = _infeasible_message(problem, cache[top][1])
        if nearest is not None:
            message += (f"; the nearest sheet that meets it: {nearest['printed_rows']} rows on up to {nearest['total_points']} "
                        f"points (--max-total-points {nearest['total_points']}); write it with --write-nearest FILE")
        failure = CheckFailed(message)
        failure.nearest = nearest
        raise failure
    lo, hi = 0, top
    while lo < hi:  # the smallest sheet on the path that passes, judged at the largest total allowed
        mid = (lo + hi) // 2
        passed = ok(mid)
        say(f"  {steps[mid].printed} rows: {'meets' if passed else 'misses'} the bound")
        if passed:
            hi = mid
        else:
            lo = mid + 1
    design, top_cand = judge(hi)
    problem.design = design
    return _finish(problem, design, top_cand)


FRONTIER_SHEETS = 6  # sheets along the allocation path shown in the frontier
FRONTIER_POINTS = (20, 40, 60, 100)  # total-points limits shown (and the one set)


def frontier(problem: Problem) -> list[dict]:
    """Alternative sheets for the methodologist: sheets spread along the allocation path, each rounded at
    several total-points limits, with their figures (held out when there is a held-out part) and whether
    they meet every bound (the rows and points limits aside: those are what the table varies)."""
    steps, bound = problem.steps, problem.bound
    if not steps:
        return []
    picks = sorted({int(round(x)) for x in np.linspace(0, len(steps) - 1, FRONTIER_SHEETS)})
    out = []
    for k in picks:
        design = design_of(problem, steps[k].plans, steps[k].printed)
        for target in sorted({*FRONTIER_POINTS, bound.max_total_points}):
            found = _points_for_total(design.q, design.values, design.term_of_row, design.span, target, problem.allow_negative)
            if found is None:
                continue
            scale, (pts, offset) = found
            _, figs, held = problem.judge(design, pts, scale, offset)
            shown = held or figs
            out.append({"printed_rows": steps[k].printed, "total_points": target, "auc_loss": shown["auc_loss"],
                        "band_agreement": shown["band_agreement"], "p95_abs_risk_error": shown["p95_abs_risk_error"],
                        "max_abs_risk_error": shown["max_abs_risk_error"], "mean_abs_risk_error": shown["mean_abs_risk_error"],
                        "measured_on": "held-out patients" if held else "the patients it was chosen on",
                        "meets_bound": not bound.misses(figs) and (held is None or not bound.misses(held)),
                        "within_limits": target <= bound.max_total_points})
    out.sort(key=lambda f: (f["printed_rows"], f["total_points"]))
    return out


def search_by_term_error(problem: Problem, progress: Callable[[str], None] | None = None) -> Candidate:
    """The earlier search, kept for comparison (bench_quantize): rows allocated by each term's own error
    (knapsack over the options of `curves`), fewest rows by bisection on the row budget, then the smallest total."""
    say = progress or (lambda _m: None)
    lo = sum(min(o.size for o in opts) for opts in problem.options)
    hi = sum(max(o.size for o in opts) for opts in problem.options)
    found = _evaluate(problem, hi)
    if found is not None and found[1] is not None and not found[1].passed:
        found = (found[0], _attempt(problem, found[0], problem.bound.max_total_points, polish=True) or found[1])
    if found is None or found[1] is None or not found[1].passed:
        raise CheckFailed(_infeasible_message(problem, None if found is None else found[1]))
    best = found
    while lo < hi:  # fewest rows that pass, judged at the largest total allowed
        mid = (lo + hi) // 2
        found = _evaluate(problem, mid)
        ok = found is not None and found[1] is not None and found[1].passed
        say(f"  {mid} rows: {'meets' if ok else 'misses'} the bound")
        if ok:
            best, hi = found, mid
        else:
            lo = mid + 1
    design, top = best
    problem.design = design
    return _finish(problem, design, top)


def _finish(problem: Problem, design: Design, top: Candidate) -> Candidate:
    """The smallest total-points range for the chosen rows; the rows and total are chosen by the quick
    rounding, then the chosen sheet gets the full rounding (pair moves, scale and offset refitted). Among the
    roundings of these rows within that range that meet every bound and are about as accurate as the best
    (`EQUALLY_WELL`), the least fragile to a bedside slip is kept (`least_fragile`)."""
    chosen = _smallest_total(problem, design, top)
    target = chosen.total_range if chosen.total_range > 0 else 1
    options = [chosen, _attempt(problem, design, target, polish=True)]
    for shrink in _SHRINKS:  # each scale of the quick rounding on its own: other points for the same rows
        found = round_points(design.q, design.values, design.term_of_row, design.span / (target * shrink), target,
                             problem.allow_negative)
        if found is not None:
            options.append(_candidate_at(problem, design, design.span / (target * shrink), *found))
    kept, seen = [], set()
    for c in options:  # distinct roundings that meet every bound within the range
        key = None if c is None else (round(c.scale, 12), tuple(int(v) for p in c.points for v in p))
        if c is not None and c.passed and c.total_range <= target and key not in seen:
            seen.add(key)
            kept.append(c)
    options = kept
    scored = [(c, _weighted(problem, c), fragility(problem, c)) for c in options]
    pick = least_fragile([(w, f) for _, w, f in scored])
    problem.slip_choice = [{"weighted_error": w, "fragility": f, "total_range": c.total_range, "scale": c.scale,
                            "chosen": i == pick} for i, (c, w, f) in enumerate(scored)]
    return scored[pick][0]


EQUALLY_WELL = 0.02  # roundings within 2 % of the smallest weighted error count as meeting the bound equally well


def least_fragile(options: list[tuple[float, float]]) -> int:
    """Index of the option to keep among (weighted error, fragility) of sheets that all meet the bound: the
    least fragile of those within EQUALLY_WELL of the smallest weighted error (ties: the more accurate)."""
    best = min(w for w, _ in options)
    near = [i for i, (w, _) in enumerate(options) if w <= best * (1 + EQUALLY_WELL) + 1e-12]
    return min(near, key=lambda i: (options[i][1], options[i][0], i))


def fragility(problem: Problem, cand: Candidate) -> float:
    """Mean |Δrisk| of one neighbouring-row slip plus that of a total off by one, on the patients the sheet is
    chosen on (`scorecard.sheet.slips`): the figure `quantize` reports for the chosen sheet, as a number."""
    terms = [c.sheet_term(lay, [int(p) for p in pts]) for c, lay, pts in zip(problem.curves, cand.layouts, cand.points)
             if np.ptp(pts) != 0]
    total, choices = printed_choices(problem, cand, terms, held_out=False)
    lo, hi = int(total.min()), int(total.max())
    lo = min(lo, int(sum(np.min(p) for p in cand.points)))
    hi = max(hi, int(sum(np.max(p) for p in cand.points)))
    risk = logistic(cand.offset + cand.scale * np.arange(lo, hi + 1, dtype=float))
    sheet = {"terms": terms, "conversion": [{"total": lo + i, "risk": float(r)} for i, r in enumerate(risk)], "bands": []}
    figs = slip_figures(sheet, total, choices)
    return float(figs["neighbour_row"]["overall"]["mean_abs_risk_error"] + figs["total_off_by_one"]["mean_abs_risk_error"])


def _candidate_at(problem: Problem, design: Design, scale: float, pts: np.ndarray, offset: float) -> Candidate | None:
    """A candidate for given points (judged like `_attempt`'s)."""
    sheet = offset + scale * pts[design.ids].sum(axis=1)
    edges, figs, held = problem.judge(design, pts, scale, offset)
    passed = not problem.bound.misses(figs) and (held is None or not problem.bound.misses(held))
    s = design.starts
    per_term = [pts[s[t]:s[t + 1]] for t in range(len(design.layouts))]
    confirm_lo = None if held is None else offset + scale * pts[design.confirm_ids].sum(axis=1)
    return Candidate(design.budget, design.choice, design.layouts, per_term, scale, offset, sheet, figs,
                     int(sum(np.ptp(p) for p in per_term)), passed, held, confirm_lo, edges)


def _weighted(problem: Problem, cand: Candidate) -> float:
    """The risk-weighted squared log-odds error the rounding minimises."""
    return float(problem.weight @ (cand.sheet_logodds - problem.population.logodds) ** 2)


def bound_lines(bound: Bound, figs: dict) -> list[tuple[str, str, bool, str]]:
    """(name, figure as words, met, option to relax) for every bound set, per-patient bounds first."""
    pct = lambda v: f"{v * 100:.1f} percentage points"  # noqa: E731
    q = f"{bound.risk_error_percentile:g}th percentile |Δrisk|"
    at = _judged(figs)
    limits = figs.get("limits") or {}
    conf = f"{limits.get('confidence', 0.95):.0%}"
    lower = "" if limits.get("band_agreement") is None else f", {conf} lower limit {at('band_agreement'):.1%}"
    upper = "" if not limits else f", {conf} upper limit {pct(at('percentile_abs_risk_error'))}"
    share_up = "" if not limits else f", {conf} upper limit {at('share_over_risk_error'):.1%}"
    out = []
    if bound.min_band_agreement is not None and figs.get("band_agreement") is not None:
        out.append(("band_agreement", f"band agreement {figs['band_agreement']:.1%}{lower} (bound at least {bound.min_band_agreement:.0%})",
                    at("band_agreement") >= bound.min_band_agreement, "--min-band-agreement"))
    if bound.max_percentile_risk_error is not None:
        out.append(("percentile_risk_error", f"{q} {pct(figs['percentile_abs_risk_error'])}{upper} (bound {bound.max_percentile_risk_error * 100:g})",
                    at("percentile_abs_risk_error") <= bound.max_percentile_risk_error, "--max-percentile-risk-error"))
    if bound.max_largest_risk_error is not None:
        out.append(("largest_risk_error", f"largest |Δrisk| {pct(figs['max_abs_risk_error'])} (bound {bound.max_largest_risk_error * 100:g})",
                    figs["max_abs_risk_error"] <= bound.max_largest_risk_error, "--max-largest-risk-error"))
    out.append(("auc_loss", f"ΔAUC {figs['auc_loss']:.4f} (bound {bound.max_auc_loss:g})", figs["auc_loss"] <= bound.max_auc_loss,
                "--max-auc-loss"))
    out.append(("risk_error_share", f"{figs['share_over_risk_error']:.1%}{share_up} of patients misstated by more than "
                f"{bound.max_risk_error * 100:g} percentage points (bound {bound.risk_error_share:.0%})",
                (figs["share_over_risk_error"] if bound.risk_error_share == 0 else at("share_over_risk_error")) <= bound.risk_error_share,
                "--max-risk-error or --risk-error-share"))
    return out


def _infeasible_message(problem: Problem, top: Candidate | None) -> str:
    b = problem.bound
    if top is None:
        return (f"no sheet fits within --max-total-points {b.max_total_points}: even the coarsest rounding needs more; "
                "raise --max-total-points")
    figs, where = top.figures, ""
    if top.confirm_figures is not None and not b.misses(top.figures):
        figs, where = top.confirm_figures, " on the held-out patients"  # it met the bound in sample only
    lines = bound_lines(b, figs)
    missed = [text for _, text, met, _ in lines if not met]
    relax = [option for _, _, met, option in lines if not met]
    met = [text.split(" (bound")[0] for _, text, ok, _ in lines if ok]
    return (f"no sheet with at most {b.max_rows} rows per term and {b.max_total_points} total points meets the bound; "
            f"best achievable{where} misses: {'; '.join(missed)}" + (f" (meets: {', '.join(met)})" if met else "")
            + f"; relax {' or '.join(relax)}, or raise --max-total-points / --max-rows")


def _readability(problem: Problem, cand: Candidate) -> dict:
    """Error before rounding with readable cuts vs cuts anywhere between model bins, at the same rows, on
    each continuous term's own curve."""
    nice_total = free_total = 0.0
    per_term = {}
    for curve, lay in zip(problem.curves, cand.layouts):
        if not isinstance(curve, ContinuousCurve):
            continue
        (size,) = lay.detail["k"]
        w = curve.piece_weights(problem.weight)
        # compared without the cap, which would otherwise differ between the two sets of cuts
        rows = {k: cost for k, cost, _, _ in curve.segmentations(curve.scores, w, size, math.inf, nice=True)}
        free = {k: cost for k, cost, _, _ in curve.segmentations(curve.scores, w, size, math.inf, nice=False)}
        n_cost = rows.get(size, 0.0)
        f = free.get(size, n_cost)
        per_term[curve.name] = {"rows": size, "error_nice_cuts": n_cost, "error_any_cuts": f}
        nice_total += n_cost
        free_total += f
    extra = (nice_total / free_total - 1) if free_total > 0 else 0.0
    return {"extra_error_share": extra, "per_term": per_term,
            "note": "risk-weighted squared log-odds error before rounding, on each term's own curve; readable cuts vs cuts at any model bin edge"}


def _tradeoff(problem: Problem) -> list[dict]:
    """How the allowed total-points range trades against per-patient error, at the chosen rows."""
    d = problem.design
    y = problem.population.logodds
    out = []
    for target in sorted({10, 15, 20, 30, 40, 60, 100, problem.bound.max_total_points}):
        found = _points_for_total(d.q, d.values, d.term_of_row, d.span, target, problem.allow_negative, polish=True)
        if found is None:
            continue
        scale, (pts, offset) = found
        figs = problem.judge(d, pts, scale, offset, held_out=False)[1]
        out.append({"total_points": target, "auc_loss": figs["auc_loss"], "p95_abs_risk_error": figs["p95_abs_risk_error"],
                    "mean_abs_risk_error": figs["mean_abs_risk_error"], "share_over_risk_error": figs["share_over_risk_error"],
                    "max_abs_risk_error": figs["max_abs_risk_error"], "band_agreement": figs["band_agreement"]})
    return out


def parse_bands(text: str | None) -> list[dict]:
    """'low<5,moderate<20,high' -> bands with upper risks 0.05, 0.20 and an open last band."""
    if not text:
        return []
    bands = []
    items = [s.strip() for s in text.split(",")]
    for i, item in enumerate(items):
        last = i == len(items) - 1
        if "<" in item:
            name, _, number = item.partition("<")
            try:
                upper = float(number.strip().rstrip("%")) / 100
            except ValueError:
                raise UserError(f"--bands: {item!r}: the limit after '<' must be a percentage, e.g. low<5") from None
            if last:
                raise UserError(f"--bands: the last band {item!r} must be open (no '<'), e.g. low<5,moderate<20,high")
            if not 0 < upper < 1 or (bands and upper <= bands[-1]["upper_risk"]):
                raise UserError(f"--bands: {item!r}: limits must rise and lie between 0 and 100 percent")
        else:
            name, upper = item, None
            if not last:
                raise UserError(f"--bands: band {item!r} needs a limit such as {item}<5 (only the last band is open)")
        if not name.strip():
            raise UserError(f"--bands: {item!r} has no name; write e.g. low<5,moderate<20,high")
        bands.append({"name": name.strip(), "upper_risk": upper, "wording": PLACEHOLDER_WORDING})
    if len({b["name"] for b in bands}) != len(bands):
        raise UserError("--bands: two bands have the same name")
    return bands


def _zero_edit(model, term_name: str) -> dict | None:
    """The latest edit that removed this term's effect (`scorecard edit --remove-effect`; "zero" in models
    edited before the option was renamed), if any."""
    for edit in reversed(model.provenance.get("edits") or []):
        if edit.get("action") in ("remove_effect", "zero") and edit.get("term") == term_name:
            return edit
    return None


def _term_label(curve) -> str:
    """What a reader knows a term by: its feature's label; a pair is named as what it is, the combined effect
    of its two features beyond each alone (so a left-off pair never reads as if the features were left off)."""
    features = getattr(curve, "features", None)
    if features:
        return pair_effect_name([f.label for f in features])
    return curve.feature.label


def _single_row_note(curve, lay, pts, scale: float) -> str | None:
    """Why a measured feature prints one row for any measured value: its whole measured effect is under one
    point, or one row already meets the accuracy bound."""
    measured = np.unique(lay.row_of_piece[:curve.n_main])
    if len(measured) != 1:
        return None
    effect = float(np.ptp(curve.scores[:curve.n_main])) / scale
    return "its effect is under one point" if effect < 1 else "no split is needed for the sheet's accuracy"


def build_sheet(problem: Problem, cand: Candidate, bands: list[dict], merge_equal_levels: bool = False,
                bootstrap: int = 200, title: str | None = None, settings: dict | None = None) -> dict:
    model = problem.model
    scale, offset = cand.scale, cand.offset
    terms, dropped, piece_errors = [], [], {}
    moved_points = 0  # points of constant terms, moved into the offset: the printed totals are lower by this
    for curve, lay, pts in zip(problem.curves, cand.layouts, cand.points):
        if np.ptp(pts) == 0:
            offset += scale * float(pts[0])  # a constant term moves into the offset
            moved_points += int(pts[0])
            effect = float(np.ptp(curve.scores))
            zeroed = _zero_edit(model, curve.name)
            if effect == 0 and zeroed is not None:
                reason = f"set to zero at review by {zeroed.get('by', 'an editor')}: {zeroed.get('reason') or 'no reason given'}"
                printed = "set to zero at review; see the model's edit history"
                feature = getattr(curve, "feature", None)
                if feature is not None and feature.role == "care_process":
                    printed = "a care-process marker, set to zero at review so it cannot change anyone's points"
            elif effect == 0:
                reason = "it has no effect in the model (every score is 0)"
                printed = "no effect in the model"
            elif len(np.unique(lay.row_of_piece[:curve.n_main])) <= 1:
                # the row search gave it a single row (a not-measured row aside; a pair one cell): the sheet
                # meets the bound without it
                reason = (f"not needed to meet the accuracy bound: its whole effect ({effect:.2f} log-odds, about "
                          f"{effect / scale:.1f} points) is left to the other terms")
                printed = "small effect; the sheet meets its accuracy bound without it"
            else:
                reason = f"its whole effect ({effect:.2f} log-odds) rounds to 0 points at {scale:.3g} log-odds per point"
                printed = "its effect is smaller than one point"
            dropped.append({"name": curve.name, "label": _term_label(curve), "reason": reason, "printed": printed})
            pts = np.zeros_like(pts)
        low, high = curve.score_range()
        sheet_value = scale * pts[lay.row_of_piece]
        keep = curve.certified()
        piece_errors[curve.name] = np.concatenate([(sheet_value - low)[keep], (sheet_value - high)[keep]])
        if np.ptp(pts) == 0:
            continue
        if isinstance(curve, LevelCurve):
            terms.append(curve.sheet_term(lay, pts.tolist(), merge_equal=merge_equal_levels))
        else:
            terms.append(curve.sheet_term(lay, pts.tolist()))
            note = _single_row_note(curve, lay, pts, scale) if terms[-1]["kind"] == "continuous" else None
            if note:
                terms[-1]["single_row_note"] = note
    total_min = int(sum(min(_term_points(t)) for t in terms))
    total_max = int(sum(max(_term_points(t)) for t in terms))
    conversion = []
    for total in range(total_min, total_max + 1):
        risk = float(logistic(np.array([offset + scale * total]))[0])
        conversion.append({"total": total, "risk": risk, "text": risk_text(risk)})
    # the spread of model risk per total and per band, over every patient judged on (chosen on and held out)
    model_lo, sheet_lo = problem.population.logodds, cand.sheet_logodds
    if cand.confirm_logodds is not None:
        model_lo = np.concatenate([model_lo, problem.confirm.logodds])
        sheet_lo = np.concatenate([sheet_lo, cand.confirm_logodds])
    patient_total = np.rint((sheet_lo - offset) / scale).astype(np.int64)
    if bands and cand.band_edges is not None:  # the searched edges, as printed totals
        bands = [{**band, "first_total": total_min if b == 0 else int(min(max(edge - moved_points, total_min), total_max + 1))}
                 for b, (band, edge) in enumerate(zip(bands, cand.band_edges))]
    add_spread(conversion, patient_total, logistic(model_lo))
    bands = band_spread(bands, conversion, patient_total, logistic(model_lo))
    say_bound = problem.bound
    held_out = cand.confirm_logodds is not None
    n_chosen = problem.population.size
    sheet_band = total_band_indices({"bands": bands, "conversion": conversion}, patient_total) if bands else None
    # the figures printed and reported are the held-out ones when there is a held-out part
    figures = full_figures(problem.confirm.logodds if held_out else problem.population.logodds,
                           cand.confirm_logodds if held_out else cand.sheet_logodds, say_bound.max_risk_error, bands,
                           bootstrap=bootstrap, percentile=say_bound.risk_error_percentile,
                           sheet_band=None if sheet_band is None else sheet_band[n_chosen:] if held_out else sheet_band)
    cert = certificate(piece_errors, offset, model.intercept, scale, total_min, total_max)
    outcome = dict(model.outcome)
    report = {
        "printed_rows": printed_rows(terms),
        "rows_per_term": {c.name: lay.size for c, lay in zip(problem.curves, cand.layouts)},
        "total_points_range": total_max - total_min,
        "readability": _readability(problem, cand),
        "total_points_tradeoff": _tradeoff(problem),
        "frontier": problem.frontier or frontier(problem),
        "slip_choice": problem.slip_choice,
        "search": problem.tried,
    }
    if held_out and cand.confirm_figures is not None and cand.confirm_figures.get("limits"):
        # the one-sided confidence limits the bound was judged at on the held-out part (Bound.misses)
        report["held_out_limits"] = cand.confirm_figures["limits"]
    if held_out:
        report["in_sample"] = full_figures(problem.population.logodds, cand.sheet_logodds, say_bound.max_risk_error, bands,
                                           bootstrap=0, percentile=say_bound.risk_error_percentile,
                                           sheet_band=None if sheet_band is None else sheet_band[:n_chosen])
    doc = {
        "format_version": 1,
        "document": "scorecard-sheet",
        "title": title or f"Risk of {outcome['event']}",
        "model": {"name": model.name, "version": model.version, "fingerprint": model.fingerprint},
        "outcome": outcome,
        "link": "logit",
        "scale": {"logodds_per_point": scale, "offset": offset},
        "rounding_rule": ROUNDING_RULE,
        "cautions": list(CAUTIONS),
        "terms": terms,
        "dropped_terms": dropped,
        "total": {"min": total_min, "max": total_max},
        "conversion": conversion,
        "bands": bands,
        "bound": say_bound.document(),
        "achieved": figures,
        "certificate": cert,
        "report": report,
        "provenance": {"package_version": __version__, "settings": settings or {"max_row_error": say_bound.max_row_error,
                       "allow_negative": problem.allow_negative, "merge_equal_levels": merge_equal_levels},
                       "evaluation": (problem.confirm if held_out else problem.population).description,
                       **({"chosen_on": problem.population.description} if held_out else {})},
    }
    if model.invented_data:  # the sheet inherits the mark: every page printed from it says so
        doc["invented_data"] = True
    return doc


SPREAD_MIN_PATIENTS = 10  # fewer patients at a total: no spread is given for it
SPREAD_PERCENTILES = (10, 90)


def add_spread(conversion: list[dict], total: np.ndarray, model_risk: np.ndarray) -> None:
    """For each total: how many patients have it and the 10th-90th percentile of their exact model risk
    (numpy percentiles; none below SPREAD_MIN_PATIENTS patients). Arrays in: per-patient totals and risks."""
    order = np.argsort(total, kind="stable")
    total, model_risk = total[order], model_risk[order]
    for row in conversion:
        lo, hi = np.searchsorted(total, row["total"], side="left"), np.searchsorted(total, row["total"], side="right")
        n = int(hi - lo)
        low = high = None
        if n >= SPREAD_MIN_PATIENTS:
            low, high = (float(v) for v in np.percentile(model_risk[lo:hi], SPREAD_PERCENTILES))
        row["spread"] = {"patients": n, "low": low, "high": high}


def band_spread(bands: list[dict], conversion: list[dict], total: np.ndarray, model_risk: np.ndarray) -> list[dict]:
    """Each band with how many in 100 of the patients the sheet puts in it the exact model puts in another band."""
    if not bands:
        return bands
    sheet_band = total_band_indices({"bands": bands, "conversion": conversion}, total)
    model_band = band_indices(bands, model_risk)
    out = []
    for b, band in enumerate(bands):
        inside = sheet_band == b
        n = int(inside.sum())
        other = int(round(100 * float(np.mean(model_band[inside] != b)))) if n else None
        out.append({**band, "patients": n, "other_band_per_100": other})
    return out


def printed_rows(terms: list[dict]) -> int:
    """Rows a nurse reads: every row of every table, and for a grid its row and column headings."""
    return int(sum(len(t["axes"][0]["rows"]) + len(t["axes"][1]["rows"]) if t["kind"] == "pair" else len(t["rows"])
                   for t in terms))


def _term_points(term: dict) -> list[int]:
    if term["kind"] == "pair":
        return [p for row in term["points"] for p in row] + ([term["missing_points"]] if term.get("missing_allowed", True) else [])
    return [r["points"] for r in term["rows"]]


def quantize_model(model: AdditiveModel, data: pd.DataFrame | None = None, bound: Bound | None = None,
                   bands: list[dict] | None = None, allow_negative: bool = False, merge_equal_levels: bool = False,
                   bootstrap: int = 200, title: str | None = None, progress: Callable[[str], None] | None = None,
                   population: Population | None = None, hold_out: bool = True, band_edge_search: bool = True,
                   band_edge_weight: float | None = None) -> dict:
    """The sheet document (a plain dict, not yet fingerprinted) for `model`: the simplest sheet meeting
    `bound` on `data` (or on a synthetic population from the model's bin counts), confirmed on held-out
    patients (`hold_out`, see `split_populations`; not when `population` is given). Raises CheckFailed with
    the best achievable figures when no sheet within the limits meets the bound."""
    bound = bound or Bound()
    say = progress or (lambda _m: None)
    # many small vector operations: BLAS threads only contend with each other on a shared machine
    with threadpool_limits(1):
        problem = prepare(model, data, bound, allow_negative, population, bands=bands, hold_out=hold_out and population is None,
                          band_edge_search=band_edge_search, band_edge_weight=band_edge_weight)
        say("patients the sheet is chosen on: " + problem.population.description
            + ("" if problem.confirm is None else f"; confirmed on {problem.confirm.description}"))
        cand = search(problem, progress)
        if bootstrap:
            say(f"measuring the chosen sheet ({bootstrap} bootstrap resamples for the ΔAUC interval)")
        settings = {"max_row_error": bound.max_row_error, "allow_negative": allow_negative,
                    "merge_equal_levels": merge_equal_levels, "bootstrap": bootstrap, "held_out": problem.confirm is not None,
                    "band_edges": "searched" if band_edge_search and bands else "at the band risk limits",
                    "band_edge_weight": BAND_EDGE_WEIGHT if band_edge_weight is None else band_edge_weight}
        doc = build_sheet(problem, cand, bands or [], merge_equal_levels, bootstrap, title, settings)
        doc["report"]["slips"] = _slips(doc, problem, cand, merge_equal_levels)
        return doc


@dataclass
class PrintedChoices:
    """One printed table as the quantizer's patients meet it (`scorecard.sheet.slips.Choices`)."""

    name: str
    label: str
    points: np.ndarray
    index: np.ndarray


def _choice_of_row(curve: Curve, lay: RowPlan, pts: np.ndarray, merge_equal_levels: bool) -> np.ndarray:
    """For each row of the plan, its printed choice (`sheet.slips.Choices` order): the sheet prints
    neighbouring ranges of equal points as one row (`ContinuousCurve.sheet_term`) and, with
    --merge-equal-levels, categories of equal points as one (`LevelCurve.sheet_term`); specials follow."""
    if isinstance(curve, ContinuousCurve):
        (k,) = lay.detail["k"]
        ranged = np.concatenate([[0], np.cumsum(pts[1:k] != pts[:k - 1])]).astype(np.int64)
        return np.concatenate([ranged, ranged[-1] + 1 + np.arange(lay.n_rows - k)])
    if isinstance(curve, LevelCurve) and curve.kind == "categorical" and merge_equal_levels:
        groups: list[int] = []
        out = []
        for i in range(curve.n_main):
            p = int(pts[i])
            if p not in groups:
                groups.append(p)
            out.append(groups.index(p))
        return np.array(out + [len(groups) + j for j in range(lay.n_rows - curve.n_main)], dtype=np.int64)
    return np.arange(lay.n_rows, dtype=np.int64)  # flags, unmerged categories, pair cells then not measured


def printed_choices(problem: Problem, cand: Candidate, terms: list[dict], held_out: bool,
                    merge_equal_levels: bool = False) -> tuple[np.ndarray, list[PrintedChoices]]:
    """(raw total, choices per printed term) of the patients (held out, or choosing) on a candidate sheet whose
    printed terms are `terms` (the candidate's non-constant terms, as `sheet_term` writes them)."""
    curves = problem.confirm_curves if held_out else problem.curves
    out = []
    n = (problem.confirm if held_out else problem.population).size
    total = np.zeros(n, dtype=np.int64)
    printed = iter(terms)
    for curve, lay, pts in zip(curves, cand.layouts, cand.points):
        rows = lay.row_of_piece[curve.patient_piece]
        total += np.asarray(pts, dtype=np.int64)[rows]
        if np.ptp(pts) == 0:
            continue
        term = next(printed)
        if term["kind"] == "pair":
            points = np.array([p for row in term["points"] for p in row] + [term["missing_points"]], dtype=np.int64)
        else:
            points = np.array([r["points"] for r in term["rows"]], dtype=np.int64)
        index = _choice_of_row(curve, lay, np.asarray(pts), merge_equal_levels)[rows]
        out.append(PrintedChoices(term["name"], term["label"], points, index))
    return total, out


def _slips(doc: dict, problem: Problem, cand: Candidate, merge_equal_levels: bool) -> dict:
    """Slip robustness of the chosen sheet on the patients its figures are reported on (the sheet's rule,
    `scorecard.sheet.slips`, which `check` applies to its own scoring of a cohort)."""
    held_out = cand.confirm_logodds is not None
    total, choices = printed_choices(problem, cand, doc["terms"], held_out, merge_equal_levels)
    moved = sum(int(p[0]) for p in cand.points if np.ptp(p) == 0)
    return slip_figures(doc, total - moved, choices)
