"""The agreement check: one sheet, one model, one cohort -> every figure of the report and each bound PASS/FAIL.

The sheet side is recomputed from the sheet document by `scorecard.audit.paper` (as a person reads the page);
the model side comes from `scorecard.model.contributions`. Nothing is taken from the quantizer: the figures
the quantizer stored under `achieved` are shown beside ours for comparison only.

The cohort may come in chunks: each is scored and reduced to the compact per-patient state of
`scorecard.audit.gather` (the model's log-odds, the sheet's total, the outcome, the outside-range flag) and
tallies; every figure below is computed once, from that state of the whole cohort. The model's side is
therefore exact, not approximated: the same figures as a cohort read whole, which is the one-chunk case.
"""

from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd

from scorecard.audit import statistics
from scorecard.audit.gather import TOP_PATIENTS, CheckState, outcome_values  # noqa: F401  (outcome_values: the check's reading)
from scorecard.audit.paper import band_index, conversion_arrays, sheet_logodds, total_band_index
from scorecard.errors import UserError
from scorecard.model import AdditiveModel, logistic
from scorecard.sheet import short_fingerprint

REPORT_TAG = "scorecard-check-report"
HISTOGRAM_BINS = 41
# a computed figure equal to its bound up to float noise passes
_SLACK = 1e-9


# The sheet stores offset, log-odds per point and risks at 11 significant digits (jsondoc's canonical numbers),
# so a recomputed risk differs from the stated one by up to ~2e-10; a wrong conversion row differs by far more.
CONVERSION_TOLERANCE = 1e-9

def _rows_per_block(term: dict) -> list[int]:
    """Printed ranges of a measured item (the not-measured row not counted); one count per measured pair axis.
    Categories and yes/no items print one row per level and are not limited by the bound."""
    if term["kind"] == "pair":
        return [len(a["rows"]) for a in term["axes"] if a["kind"] == "continuous"]
    if term["kind"] != "continuous":
        return []
    return [sum(1 for r in term["rows"] if not r.get("missing"))]


def _bound(name: str, what: str, value, limit, passed: bool, shown: str) -> dict:
    return {"name": name, "what": what, "value": value, "bound": limit, "pass": bool(passed), "shown": shown}


def _risk_errors(a: np.ndarray, limit: float, percentile: float) -> dict:
    """The figures of |risk difference| `a` (reordered in place by the percentiles: the caller's last use)."""
    share = np.count_nonzero(a > limit + _SLACK) / len(a)
    largest, mean = float(a.max()), float(a.mean())
    p99, p95, pq = np.percentile(a, [99, 95, percentile], overwrite_input=True)
    return {
        "max_abs_risk_error": largest,
        "p99_abs_risk_error": float(p99),
        "p95_abs_risk_error": float(p95),
        "risk_error_percentile": float(percentile),
        "percentile_abs_risk_error": float(pq),
        "mean_abs_risk_error": mean,
        "share_over_risk_error": float(share),
    }


def per_patient_bounds(bound: dict, agreement: dict, certificate: dict) -> tuple[list[dict], list[dict]]:
    """The per-patient bounds of a sheet judged on figures computed from per-patient arrays: (judged, not
    bounded). Each judged entry is PASS/FAIL against the sheet's own bound; a figure no bound covers is
    listed as not bounded and is never counted as a pass. Band agreement leads, then the percentile and the
    largest |Δrisk|, then the certificate's worst case (docs/audit.md)."""
    pp = lambda v: f"{v * 100:.2f} percentage points"  # noqa: E731
    judged, free = [], []

    def add(name: str, what: str, value, limit, at_least: bool, shown: str, limit_shown: str) -> None:
        if value is None:
            return
        if limit is None:
            free.append({"name": name, "what": what, "value": value, "shown": shown})
            return
        ok = value >= limit - _SLACK if at_least else value <= limit + _SLACK
        judged.append(_bound(name, what, value, limit, ok, f"{shown} vs {'at least ' if at_least else ''}{limit_shown}"))

    share = agreement.get("band_agreement")
    add("band_agreement", "share of patients in the same risk band on the sheet as by the exact model", share,
        bound.get("min_band_agreement"), True, "–" if share is None else f"{share:.2%}",
        "" if bound.get("min_band_agreement") is None else f"{bound['min_band_agreement']:.2%}")
    q = agreement["risk_error_percentile"]
    limit = bound.get("max_percentile_risk_error")
    add("percentile_risk_error", f"{q:g}th percentile of |risk difference|", agreement["percentile_abs_risk_error"], limit, False,
        pp(agreement["percentile_abs_risk_error"]), "" if limit is None else pp(limit))
    limit = bound.get("max_largest_risk_error")
    add("largest_risk_error", "largest |risk difference| of any patient", agreement["max_abs_risk_error"], limit, False,
        pp(agreement["max_abs_risk_error"]), "" if limit is None else pp(limit))
    if q != 99:
        free.append({"name": "p99_risk_error", "what": "99th percentile of |risk difference|", "value": agreement["p99_abs_risk_error"],
                     "shown": pp(agreement["p99_abs_risk_error"])})
    free.append({"name": "mean_risk_error", "what": "mean |risk difference|", "value": agreement["mean_abs_risk_error"],
                 "shown": pp(agreement["mean_abs_risk_error"])})
    limit = bound.get("max_certificate_risk_error")
    add("certificate_size", "the certificate's worst case: largest risk error any combination of inputs can give, at any total",
        float(certificate["max_risk_error"]), limit, False,
        f"{pp(float(certificate['max_risk_error']))} ({float(certificate['max_logodds_error']):.2f} log-odds)",
        "" if limit is None else pp(limit))
    return judged, free


def _band_matrix(sheet: dict, model_risk: np.ndarray, total: np.ndarray) -> dict | None:
    if not sheet.get("bands"):
        return None
    names = [b["name"] for b in sheet["bands"]]
    k = len(names)
    counts = np.zeros(k * k, dtype=np.int64)
    for part in statistics.blocks(len(total)):
        counts += np.bincount(band_index(sheet, model_risk[part]) * k + total_band_index(sheet, total[part]), minlength=k * k)
    counts = counts.reshape(k, k)
    return {"bands": names, "rows_are": "model band", "columns_are": "sheet band",
            "counts": counts.tolist(), "agreement": float(np.trace(counts) / counts.sum())}


def _against_outcomes(y: np.ndarray, model_lo: np.ndarray, model_risk: np.ndarray, total: np.ndarray, sheet: dict,
                      sheet_risk: np.ndarray) -> dict | None:
    """Both scores against the observed outcomes (1/0; -1 not known); patients come sorted by model_lo. When
    every outcome is known (the usual case) the arrays are used as they are, not copied; the 0/1 outcomes stay
    int8 and are turned into floats a block at a time."""
    known = y >= 0
    n_known = int(np.count_nonzero(known))
    if n_known == 0:
        return None
    if n_known == len(y):
        yk, model_lo, model_risk, total, sheet_risk = y, model_lo, model_risk, total, sheet_risk
    else:
        yk, model_lo, model_risk, total, sheet_risk = y[known], model_lo[known], model_risk[known], total[known], sheet_risk[known]
    del known
    events = int(np.count_nonzero(yk))
    out: dict = {"n": n_known, "not_known": len(y) - n_known, "event_rate": events / n_known}
    one_class = events in (0, n_known)  # every outcome 0 (or 1): no intercept, slope or AUC is estimable
    for who in ("model", "sheet"):
        if who == "model":
            risk = model_risk
            auc = None if one_class else statistics.sorted_auc(statistics.run_ids(model_lo), yk)
            calibration = (None, None) if one_class else statistics.logistic_calibration(model_lo, yk)  # one patient per x
        else:
            risk = sheet_risk
            gs, ngs, _ = statistics.total_groups(total)
            auc = None if one_class else statistics.auc_from_group_sums(*statistics.group_sums(gs, ngs, yk))
            del gs
            totals, s, m = statistics.grouped(total, yk)
            calibration = (None, None) if one_class else statistics.logistic_calibration(sheet_logodds(sheet, totals), s, m)
        a, b = calibration
        out[who] = {
            "auc": auc,
            "calibration_intercept": a,
            "calibration_slope": b,
            "brier": statistics.brier(risk, yk),
            "mean_risk": float(np.mean(risk)),
            "calibration_table": statistics.calibration_table(risk, yk),
        }
    out["auc_loss"] = None if out["model"]["auc"] is None else out["model"]["auc"] - out["sheet"]["auc"]
    return out


MIN_PATIENTS = 2  # an AUC, a calibration and a bootstrap need two patients at the very least


PROGRESS_EVERY = 1_000_000  # patients between two progress lines of a long check


def check_agreement(sheet: dict, model: AdditiveModel, cohort: pd.DataFrame | Iterable[pd.DataFrame], outcome: str | None = None,
                    replicates: int = 200, seed: int = 0, model_matches: bool = True, progress=None) -> dict:
    """Every figure of the agreement report as a plain dict (also the --json output). `cohort` is a table,
    or its chunks in file order (`scorecard.tabular.iter_table`): only the compact state of
    `scorecard.audit.gather` is kept between chunks, and a table is the one-chunk case."""
    say = progress or (lambda message: None)
    state = CheckState(sheet, model, outcome)
    for frame in [cohort] if isinstance(cohort, pd.DataFrame) else cohort:
        before = state.n
        state.add(frame)
        if state.n // PROGRESS_EVERY > before // PROGRESS_EVERY:
            say(f"scored {state.n:,} patients with the sheet and the exact model")
    if state.n < MIN_PATIENTS:
        raise UserError(f"{state.source}: {state.n} patient(s); agreement needs at least {MIN_PATIENTS} to compare "
                        "paper and software (no AUC or spread is defined on fewer); give a larger cohort")
    return agreement_report(state, replicates=replicates, seed=seed, model_matches=model_matches, say=say)


def agreement_report(state: CheckState, replicates: int, seed: int, model_matches: bool, say) -> dict:
    """The report from the state of a whole cohort (`check_agreement`)."""
    sheet, model, outcome = state.sheet, state.model, state.outcome
    patients = state.patients()
    model_lo, total, y = patients["logodds"], patients["total"], patients["outcome"]
    first, risk_table, _ = conversion_arrays(sheet)
    model_risk = logistic(model_lo)
    bound = sheet["bound"]
    recalibrated = sheet.get("recalibration")

    # sheet against model: AUCs against the outcomes the model's own risks imply (each patient an event with
    # weight p and a non-event with weight 1 - p), the definition the bound is set in; observed outcomes,
    # when the cohort has them, get their own section
    has_outcomes = y is not None and bool((y >= 0).any())
    basis = "outcomes expected from the model's risk"
    # memory: the per-patient arrays are made when first needed and dropped when last used; every full-cohort
    # sum runs a block at a time (`statistics.blocks`), so the working memory is a few arrays of the cohort
    ids = statistics.run_ids(model_lo)
    gs, ngs, low_total = statistics.total_groups(total)  # tie group of the sheet's total
    auc_model = statistics.sorted_auc(ids, model_risk)
    auc_sheet = statistics.auc_from_group_sums(*statistics.group_sums(gs, ngs, model_risk))
    if state.n >= PROGRESS_EVERY:
        say(f"bootstrap interval of the AUC loss ({replicates} resamples of {state.n:,} patients)")
    ci = statistics.bootstrap_auc_difference(ids, gs, ngs, model_risk, replicates=replicates, seed=seed)
    del ids
    sheet_risk = risk_table[total - first]
    totals, expected, counts = statistics.grouped(total, model_risk)
    cal_a, cal_b = statistics.logistic_calibration(sheet_logodds(sheet, totals), expected, counts)
    brier_model = statistics.expected_brier(model_risk, model_risk)
    brier_sheet = statistics.expected_brier(sheet_risk, model_risk)
    bands = _band_matrix(sheet, model_risk, total)
    against = _against_outcomes(y, model_lo, model_risk, total, sheet, sheet_risk) if has_outcomes else None
    diff = sheet_risk  # the sheet's risks become the differences in place: sheet_risk - model_risk
    del sheet_risk
    diff -= model_risk
    del model_risk

    inside = ~patients["outside"]
    cert = sheet["certificate"]
    by_total = {int(e["total"]): float(e["max_risk_error"]) for e in cert.get("risk_error_by_total", [])}
    risk_limit = np.array([by_total.get(int(t), float(cert["max_risk_error"])) for t in range(low_total, int(total.max()) + 1)])
    largest = max(float(diff.max()), -float(diff.min()))  # the largest |difference|, exactly
    magnitude = float(np.ceil(largest * 1000) / 10) or 0.1  # percentage points, to 0.1
    edges = np.histogram_bin_edges([], bins=HISTOGRAM_BINS, range=(-magnitude, magnitude))
    counts = np.zeros(HISTOGRAM_BINS, dtype=np.int64)
    worst_inside, over_chart = 0.0, 0
    for part in statistics.blocks(state.n):
        ins = inside[part]
        lo_err = np.abs(sheet_logodds(sheet, total[part][ins]) - model_lo[part][ins])
        worst_inside = max(worst_inside, float(lo_err.max()) if len(lo_err) else 0.0)
        over_chart += int(np.count_nonzero(np.abs(diff[part][ins]) > risk_limit[gs[part][ins]] + _SLACK))
        counts += np.histogram(diff[part] * 100, bins=HISTOGRAM_BINS, range=(-magnitude, magnitude))[0]  # same bins: counts add up
    del gs
    np.abs(diff, out=diff)  # the last use: |difference|, partitioned in place for the percentiles
    errors = _risk_errors(diff, float(bound["max_risk_error"]), float(bound.get("risk_error_percentile", 95)))
    del diff
    agreement = {
        "auc_basis": basis,
        "auc_model": auc_model,
        "auc_sheet": auc_sheet,
        "auc_loss": auc_model - auc_sheet,
        "auc_loss_ci": list(ci),
        "bootstrap_replicates": replicates,
        **errors,
        "calibration_intercept": cal_a,
        "calibration_slope": cal_b,
        "brier_basis": basis,
        "brier_model": brier_model,
        "brier_sheet": brier_sheet,
    }
    agreement["band_agreement"] = None if bands is None else bands["agreement"]

    scale = sheet["scale"]
    totals = np.array([c["total"] for c in sheet["conversion"]], dtype=float)
    stated = np.array([c["risk"] for c in sheet["conversion"]], dtype=float)
    conversion_error = float(np.max(np.abs(stated - logistic(scale["offset"] + scale["logodds_per_point"] * totals))))
    most_rows = max((n for t in sheet["terms"] for n in _rows_per_block(t)), default=0)
    share = agreement["share_over_risk_error"]
    span = int(sheet["total"]["max"]) - int(sheet["total"]["min"])
    per_patient, not_bounded = per_patient_bounds(bound, agreement, cert)
    checks = per_patient + [
        _bound("model", "the model is the one the sheet was built from (fingerprint)", model.fingerprint,
               sheet["model"]["fingerprint"], model_matches, "same fingerprint" if model_matches else "DIFFERENT model (overridden)"),
        _bound("conversion", "conversion risks equal logistic(offset + log-odds per point x total)", conversion_error,
               CONVERSION_TOLERANCE, conversion_error <= CONVERSION_TOLERANCE, f"largest difference {conversion_error:.1e}"),
        _bound("auc_loss", f"AUC loss (model - sheet, {basis}) at most the bound", agreement["auc_loss"],
               bound["max_auc_loss"], agreement["auc_loss"] <= bound["max_auc_loss"] + _SLACK,
               f"{agreement['auc_loss']:.4f} (95% CI {ci[0]:.4f} to {ci[1]:.4f}) vs {bound['max_auc_loss']:.4f}"),
        _bound("risk_error_share", f"share of patients with |risk difference| > {bound['max_risk_error'] * 100:g} percentage points",
               share, bound["risk_error_share"], share <= bound["risk_error_share"] + _SLACK,
               f"{share:.2%} vs {bound['risk_error_share']:.2%}"),
        _bound("certificate_logodds", "the sheet keeps its own certificate: no patient inside the training ranges is further "
               "from the model than it states (log-odds; a FAIL is a quantizer bug)",
               worst_inside, cert["max_logodds_error"], worst_inside <= float(cert["max_logodds_error"]) + _SLACK,
               f"worst {worst_inside:.4f} vs {float(cert['max_logodds_error']):.4f} ({int(inside.sum())} patients inside)"),
        _bound("certificate_risk", "the sheet keeps its own certificate: no patient inside the training ranges exceeds its "
               "risk error at their total",
               over_chart, 0, over_chart == 0, f"{over_chart} patients over"),
        _bound("rows", "printed rows per block at most the bound", most_rows, bound["max_rows"],
               most_rows <= bound["max_rows"], f"{most_rows} vs {bound['max_rows']}"),
        _bound("total_points", "range of total points (highest - lowest) at most the bound", span, bound["max_total_points"],
               span <= bound["max_total_points"], f"{span} vs {bound['max_total_points']}"),
    ]
    if state.n >= PROGRESS_EVERY:
        say("writing the report")
    return _without_nan({
        "document": REPORT_TAG,
        "format_version": 1,
        "passed": all(c["pass"] for c in checks),
        "sheet": {"invented_data": bool(sheet.get("invented_data")), "title": sheet["title"], "fingerprint": sheet.get("fingerprint", ""), "short_fingerprint": short_fingerprint(sheet),
                  "model_fingerprint": sheet["model"]["fingerprint"], "outcome": sheet["outcome"]},
        "model": {"name": model.name, "version": model.version, "fingerprint": model.fingerprint, "matches_sheet": model_matches},
        "cohort": {"source": state.source, "n": int(state.n), "outcome_column": outcome,
                   "outside_training": int(state.n - inside.sum())},
        "bounds": checks,
        "not_bounded": not_bounded,
        "agreement": agreement,
        "band_matrix": bands,
        "against_outcomes": against,
        "certificate": {"max_logodds_error": float(cert["max_logodds_error"]), "worst_inside": worst_inside,
                        "max_risk_error": float(cert["max_risk_error"]),
                        "patients_inside": int(inside.sum()), "over_risk_chart": over_chart,
                        "by_total": certificate_by_total(sheet)},
        "stored_achieved": sheet.get("achieved"),
        "histogram": {"unit": "percentage points (sheet risk - model risk)", "edges": edges.tolist(), "counts": counts.tolist()},
        "slips": state.slips.figures(),
        "largest": state.largest_rows(),
        "warnings": state.reading.warnings(),
        "notes": state.reading.notes() + [f"model: {line}" for line in state.model_report.lines()] + ([
            f"recalibrated sheet: the model's log-odds are compared as {recalibrated['model_logodds']['intercept']:+.4f} + "
            f"{recalibrated['model_logodds']['slope']:.4f} x model log-odds, as the sheet states; the stored figures are the "
            f"original sheet's ({recalibrated['original_fingerprint'][:12]})"] if recalibrated else []),
    })


def certificate_by_total(sheet: dict) -> list[dict]:
    """For every total: the conversion risk and the range the exact model's risk of a patient with that total
    can lie in whatever the inputs, logistic(offset + scale x total -/+ the certificate's log-odds bound),
    recomputed from the sheet's scale and certificate."""
    scale, bound = sheet["scale"], float(sheet["certificate"]["max_logodds_error"])
    out = []
    for c in sheet["conversion"]:
        z = float(scale["offset"]) + float(scale["logodds_per_point"]) * int(c["total"])
        low, high = logistic(np.array([z - bound, z + bound]))
        out.append({"total": int(c["total"]), "risk": float(c["risk"]), "model_risk_low": float(low), "model_risk_high": float(high)})
    return out


def _without_nan(value):
    """A figure that cannot be computed on this cohort (an AUC with no events, a slope with one total) is
    null in the report, shown as '–'."""
    if isinstance(value, dict):
        return {k: _without_nan(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_without_nan(v) for v in value]
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value
