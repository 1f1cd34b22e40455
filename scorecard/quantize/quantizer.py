"""From an additive model to a sheet document: the search for the simplest sheet that meets the bound.

1. pieces and options: every term's curve is split into pieces and segmented optimally for 1..max_rows rows
   at readable cuts (`curves`, `segment`, `nice`);
2. allocation: a row budget is spread over the terms (`allocate`);
3. refit: all row values are refitted jointly (`refit`);
4. scale and points: a points scale and integer points, improved beyond independent rounding (`points`);
5. check: ΔAUC and the share of patients misstated by more than the risk bound (`figures`).
The smallest row budget that passes is found by bisection, then the smallest total-points range for it;
the figures are measured in full, the certificate computed (`certificate`) and the document assembled.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, replace
from typing import Callable

import numpy as np
import pandas as pd

from scorecard import __version__
from scorecard.errors import CheckFailed, UserError
from scorecard.model import AdditiveModel, logistic
from scorecard.quantize.allocate import allocate_rows
from scorecard.quantize.certificate import certificate
from scorecard.quantize.curves import Curve, RowPlan, LevelCurve, build_curves
from scorecard.quantize.accuracy import full_figures, quick_figures, expected_auc
from scorecard.quantize.nice import MAX_CANDIDATES
from scorecard.quantize.population import Population, evaluation_population
from scorecard.quantize.points import Quadratic, fit_scale_offset, polish_points, round_points, weighted_error
from scorecard.quantize.refit import refit_row_values
from scorecard.sheet import CAUTIONS, ROUNDING_RULE, risk_text

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
    max_total_points: int = 40
    max_row_error: float = 1.0
    min_band_agreement: float | None = 0.80
    risk_error_percentile: float = 95.0
    max_percentile_risk_error: float | None = 0.10
    max_largest_risk_error: float | None = 0.35
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
        """Names of the bounds `figs` (see `figures.patient_figures`) does not meet; empty when all are met."""
        out = []
        if figs["auc_loss"] > self.max_auc_loss:
            out.append("auc_loss")
        if figs["share_over_risk_error"] > self.risk_error_share:
            out.append("risk_error_share")
        if self.min_band_agreement is not None and figs.get("band_agreement") is not None \
                and figs["band_agreement"] < self.min_band_agreement:
            out.append("band_agreement")
        if self.max_percentile_risk_error is not None and figs["percentile_abs_risk_error"] > self.max_percentile_risk_error:
            out.append("percentile_risk_error")
        if self.max_largest_risk_error is not None and figs["max_abs_risk_error"] > self.max_largest_risk_error:
            out.append("largest_risk_error")
        return out

    def document(self) -> dict:
        """The sheet's `bound` block (the row cap is a setting of the search, recorded in provenance)."""
        return {k: v for k, v in asdict(self).items() if k != "max_row_error"}


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

    def figures(self, sheet_logodds: np.ndarray) -> dict:
        """The figures the bound is judged on, for sheet log-odds on the evaluation population."""
        return quick_figures(self.population.logodds, sheet_logodds, self.bound.max_risk_error, self.auc_model,
                             self.bands, self.bound.risk_error_percentile)


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


def _allocate(problem: Problem, budget: int) -> Design | None:
    choice = allocate_rows(problem.options, budget)
    if choice is None:
        return None
    layouts = [problem.options[t][i].layout for t, i in enumerate(choice)]
    ids, v0, term_of_row, starts = _design(problem, layouts)
    q = Quadratic.from_rows(ids, starts, problem.population.logodds, problem.weight)
    values, _ = refit_row_values(q, v0)
    span = _span(values, term_of_row)
    return Design(budget, choice, layouts, ids, starts, term_of_row, q, values, span if span > 0 else 1.0)


def _attempt(problem: Problem, design: Design, target: int, polish: bool = False) -> Candidate | None:
    """Points for one allocation with total-points range at most `target`, and whether they pass."""
    found = _points_for_total(design.q, design.values, design.term_of_row, design.span, target, problem.allow_negative,
                              polish)
    if found is None:
        return None
    bound = problem.bound
    scale, (pts, offset) = found
    sheet = offset + scale * pts[design.ids].sum(axis=1)
    figs = problem.figures(sheet)
    passed = not bound.misses(figs)
    s = design.starts
    per_term = [pts[s[t]:s[t + 1]] for t in range(len(design.layouts))]
    total_range = int(sum(np.ptp(p) for p in per_term))
    problem.tried.append({"row_budget": design.budget, "total_points_target": target, "scale": scale,
                          "auc_loss": figs["auc_loss"], "share_over_risk_error": figs["share_over_risk_error"],
                          "passed": passed})
    return Candidate(design.budget, design.choice, design.layouts, per_term, scale, offset, sheet, figs, total_range, passed)


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


def prepare(model: AdditiveModel, data: pd.DataFrame | None = None, bound: Bound | None = None,
            allow_negative: bool = False, population: Population | None = None,
            max_candidates: int = MAX_CANDIDATES, bands: list[dict] | None = None) -> Problem:
    bands = list(bands or [])
    bound = (bound or Bound()).for_bands(bands)
    bound.check()
    if not model.terms:
        raise UserError("the model has no terms; there is nothing to put on a sheet")
    population = population or evaluation_population(model, data)
    p = population.risk
    weight = p * (1 - p)
    curves = build_curves(model, population.frame, max_candidates)
    options = [c.options(weight, bound.max_rows, bound.max_row_error) for c in curves]
    auc_model = expected_auc(p, population.logodds)
    return Problem(model, population, curves, options, weight, auc_model, bound, allow_negative, bands)


def search(problem: Problem, progress: Callable[[str], None] | None = None) -> Candidate:
    """The simplest passing candidate: fewest rows (bisection on the row budget), then smallest total."""
    say = progress or (lambda _m: None)
    lo = sum(min(o.size for o in opts) for opts in problem.options)
    hi = sum(max(o.size for o in opts) for opts in problem.options)
    say(f"looking for the fewest printed rows that meet the bound (between {lo} and {hi}, over {len(problem.curves)} terms)")
    found = _evaluate(problem, hi)
    if found is not None and found[1] is not None and not found[1].passed:
        # before calling the bound out of reach, give the largest sheet the full rounding: the quick one
        # can miss by a hair (e.g. the demo's true model with --max-row-error 0.5: ΔAUC 0.0101 -> 0.0099)
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
    chosen = _smallest_total(problem, design, top)
    # the rows and total are chosen by the quick rounding; the chosen sheet then gets the full rounding
    # (pair moves, scale and offset refitted), kept when it still meets the bound
    polished = _attempt(problem, design, chosen.total_range if chosen.total_range > 0 else 1, polish=True)
    if polished is not None and polished.passed and _weighted(problem, polished) <= _weighted(problem, chosen):
        return polished
    return chosen


def _weighted(problem: Problem, cand: Candidate) -> float:
    """The risk-weighted squared log-odds error the rounding minimises."""
    return float(problem.weight @ (cand.sheet_logodds - problem.population.logodds) ** 2)


def bound_lines(bound: Bound, figs: dict) -> list[tuple[str, str, bool, str]]:
    """(name, figure as words, met, option to relax) for every bound set, per-patient bounds first."""
    pct = lambda v: f"{v * 100:.1f} percentage points"  # noqa: E731
    q = f"{bound.risk_error_percentile:g}th percentile |Δrisk|"
    out = []
    if bound.min_band_agreement is not None and figs.get("band_agreement") is not None:
        out.append(("band_agreement", f"band agreement {figs['band_agreement']:.1%} (bound at least {bound.min_band_agreement:.0%})",
                    figs["band_agreement"] >= bound.min_band_agreement, "--min-band-agreement"))
    if bound.max_percentile_risk_error is not None:
        out.append(("percentile_risk_error", f"{q} {pct(figs['percentile_abs_risk_error'])} (bound {bound.max_percentile_risk_error * 100:g})",
                    figs["percentile_abs_risk_error"] <= bound.max_percentile_risk_error, "--max-percentile-risk-error"))
    if bound.max_largest_risk_error is not None:
        out.append(("largest_risk_error", f"largest |Δrisk| {pct(figs['max_abs_risk_error'])} (bound {bound.max_largest_risk_error * 100:g})",
                    figs["max_abs_risk_error"] <= bound.max_largest_risk_error, "--max-largest-risk-error"))
    out.append(("auc_loss", f"ΔAUC {figs['auc_loss']:.4f} (bound {bound.max_auc_loss:g})", figs["auc_loss"] <= bound.max_auc_loss,
                "--max-auc-loss"))
    out.append(("risk_error_share", f"{figs['share_over_risk_error']:.1%} of patients misstated by more than "
                f"{bound.max_risk_error * 100:g} percentage points (bound {bound.risk_error_share:.0%})",
                figs["share_over_risk_error"] <= bound.risk_error_share, "--max-risk-error or --risk-error-share"))
    return out


def _infeasible_message(problem: Problem, top: Candidate | None) -> str:
    b = problem.bound
    if top is None:
        return (f"no sheet fits within --max-total-points {b.max_total_points}: even the coarsest rounding needs more; "
                "raise --max-total-points")
    lines = bound_lines(b, top.figures)
    missed = [text for _, text, met, _ in lines if not met]
    relax = [option for _, _, met, option in lines if not met]
    met = [text.split(" (bound")[0] for _, text, ok, _ in lines if ok]
    return (f"no sheet with at most {b.max_rows} rows per term and {b.max_total_points} total points meets the bound; "
            f"best achievable misses: {'; '.join(missed)}" + (f" (meets: {', '.join(met)})" if met else "")
            + f"; relax {' or '.join(relax)}, or raise --max-total-points / --max-rows")


def _readability(problem: Problem, cand: Candidate) -> dict:
    """Error before rounding with readable cuts vs cuts anywhere between model bins, at the same rows."""
    nice_total = free_total = 0.0
    per_term = {}
    for curve, opts, i in zip(problem.curves, problem.options, cand.choice):
        if isinstance(curve, LevelCurve):
            continue
        size = opts[i].size
        # compared without the cap, which would otherwise differ between the two sets of cuts
        rows = {o.size: o.cost for o in curve.options(problem.weight, problem.bound.max_rows, math.inf, nice=True)}
        free = {o.size: o.cost for o in curve.options(problem.weight, problem.bound.max_rows, math.inf, nice=False)}
        n_cost = rows.get(size, opts[i].cost)
        f = free.get(size, n_cost)
        per_term[curve.name] = {"rows": size, "error_nice_cuts": n_cost, "error_any_cuts": f}
        nice_total += n_cost
        free_total += f
    extra = (nice_total / free_total - 1) if free_total > 0 else 0.0
    return {"extra_error_share": extra, "per_term": per_term,
            "note": "risk-weighted squared log-odds error before rounding; readable cuts vs cuts at any model bin edge"}


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
        figs = problem.figures(offset + scale * pts[d.ids].sum(axis=1))
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
        return f"the combined effect of {features[0].label} and {features[1].label}, beyond each alone"
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
    for curve, lay, pts in zip(problem.curves, cand.layouts, cand.points):
        if np.ptp(pts) == 0:
            offset += scale * float(pts[0])  # a constant term moves into the offset
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
    say_bound = problem.bound
    figures = full_figures(problem.population.logodds, cand.sheet_logodds, say_bound.max_risk_error, bands, bootstrap=bootstrap,
                           percentile=say_bound.risk_error_percentile)
    cert = certificate(piece_errors, offset, model.intercept, scale, total_min, total_max)
    outcome = dict(model.outcome)
    report = {
        "printed_rows": printed_rows(terms),
        "rows_per_term": {c.name: lay.size for c, lay in zip(problem.curves, cand.layouts)},
        "total_points_range": total_max - total_min,
        "readability": _readability(problem, cand),
        "total_points_tradeoff": _tradeoff(problem),
        "search": problem.tried,
    }
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
                       "evaluation": problem.population.description},
    }
    if model.invented_data:  # the sheet inherits the mark: every page printed from it says so
        doc["invented_data"] = True
    return doc


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
                   population: Population | None = None) -> dict:
    """The sheet document (a plain dict, not yet fingerprinted) for `model`: the simplest sheet meeting
    `bound` on `data` (or on a synthetic population from the model's bin counts). Raises CheckFailed with
    the best achievable figures when no sheet within the limits meets the bound."""
    bound = bound or Bound()
    say = progress or (lambda _m: None)
    problem = prepare(model, data, bound, allow_negative, population, bands=bands)
    say("patients the sheet is judged on: " + ("the cohort given" if data is not None
                                                 else "a synthetic population drawn from the model's own bin counts"))
    cand = search(problem, progress)
    if bootstrap:
        say(f"measuring the chosen sheet ({bootstrap} bootstrap resamples for the ΔAUC interval)")
    settings = {"max_row_error": bound.max_row_error, "allow_negative": allow_negative,
                "merge_equal_levels": merge_equal_levels, "bootstrap": bootstrap}
    doc = build_sheet(problem, cand, bands or [], merge_equal_levels, bootstrap, title, settings)
    doc["report"]["slips"] = _slips(doc, problem)
    return doc


def _slips(doc: dict, problem: Problem) -> dict | None:
    """Slip robustness of the chosen sheet on the patients it was judged on (`scorecard.audit.slips`, the same
    figure `check` reports): the chosen sheet scored as the paper does, one bedside slip at a time."""
    from scorecard.audit.paper import score_cohort
    from scorecard.audit.slips import slip_figures

    frame = problem.population.frame
    try:
        scored = score_cohort(doc, frame.astype(str).replace({"nan": "", "None": ""}))
    except UserError:
        return None  # a population the paper cannot score (e.g. a missing value the sheet refuses): no figure
    return slip_figures(doc, scored)
