"""Quality and speed of `scorecard fit` against scikit-learn in the same run (prints figures, asserts nothing).

    /work/venv/bin/python tests/benchmarks/bench_fit.py [--rows 100000] [--repeats auto] [--skip-breast-cancer]

Figures (issue 3):
- demo cohort (invented, with the age x cognition pair), 80/20 split: test AUC of our model, of
  scikit-learn's HistGradientBoostingClassifier with default settings and of LogisticRegression (one-hot
  categories, standardised numbers, median-imputed albumin plus a not-measured indicator), fit times and
  their ratio;
- the true pair's rank in the FAST ranking; each one-feature term's correlation with the true shape,
  weighted by the population density (i.e. computed over the test patients);
- the same cohort drawn without interaction: number of pairs fitted (should be 0);
- scikit-learn's bundled breast-cancer data (569 patients), 5-fold stratified CV AUC of our model against
  the better of LogisticRegression and HistGradientBoostingClassifier.
"""

from __future__ import annotations

import argparse
import os
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
from sklearn.compose import make_column_transformer
from sklearn.datasets import load_breast_cancer
from sklearn.ensemble import HistGradientBoostingClassifier
from sklearn.impute import SimpleImputer
from sklearn.linear_model import LogisticRegression
from sklearn.metrics import roc_auc_score
from sklearn.model_selection import StratifiedKFold, cross_val_score
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import OneHotEncoder, StandardScaler

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))  # run from a checkout without installing

from scorecard.demo import FEATURES, OUTCOME, PAIR_TERM, generate_cohort, true_shape
from scorecard.fit import AdditiveRiskClassifier
from scorecard.model import contributions

CATEGORICAL = ["anaesthesia", "residence"]


def timed(fn):
    """(result, wall seconds); CPU seconds of this process and its reaped children go to CPU_SECONDS."""
    start, cpu = time.perf_counter(), _cpu()
    out = fn()
    CPU_SECONDS.append(_cpu() - cpu)
    return out, time.perf_counter() - start


CPU_SECONDS: list[float] = []


def _cpu() -> float:
    t = os.times()
    return t.user + t.system + t.children_user + t.children_system


def logistic_pipeline(numeric, categorical):
    prep = make_column_transformer(
        (make_pipeline(SimpleImputer(strategy="median", add_indicator=True), StandardScaler()), numeric),
        (OneHotEncoder(handle_unknown="ignore"), categorical),
    )
    return make_pipeline(prep, LogisticRegression(max_iter=2000))


def demo_figures(rows: int, bags: int, seed: int) -> dict:
    frame = generate_cohort(rows, seed=seed, interaction=True)
    cut = int(0.8 * rows)
    train, test = frame.iloc[:cut], frame.iloc[cut:]
    X_train, y_train = train[FEATURES], train[OUTCOME].to_numpy()
    X_test, y_test = test[FEATURES], test[OUTCOME].to_numpy()

    ours = AdditiveRiskClassifier(repeats=bags, pairs="auto", random_state=seed)
    _, t_ours = timed(lambda: ours.fit(X_train, y_train))
    cpu_ours = CPU_SECONDS[-1]
    auc_ours = roc_auc_score(y_test, ours.decision_function(X_test))

    # HistGradientBoostingClassifier with its defaults; text columns as pandas categories so that its default
    # categorical_features="from_dtype" treats them natively
    X_train_h, X_test_h = X_train.copy(), X_test.copy()
    for name in CATEGORICAL:
        kinds = pd.CategoricalDtype(sorted(X_train[name].unique()))
        X_train_h[name] = X_train[name].astype(kinds)
        X_test_h[name] = X_test[name].astype(kinds)
    hgb = HistGradientBoostingClassifier()
    _, t_hgb = timed(lambda: hgb.fit(X_train_h, y_train))
    cpu_hgb = CPU_SECONDS[-1]
    auc_hgb = roc_auc_score(y_test, hgb.predict_proba(X_test_h)[:, 1])

    numeric = [f for f in FEATURES if f not in CATEGORICAL]
    lr = logistic_pipeline(numeric, CATEGORICAL)
    _, t_lr = timed(lambda: lr.fit(X_train, y_train))
    auc_lr = roc_auc_score(y_test, lr.predict_proba(X_test)[:, 1])

    ranking = [f"{a} x {b}" for a, b, *_ in ours.pair_ranking_]
    pair_rank = ranking.index(PAIR_TERM) + 1 if PAIR_TERM in ranking else None
    model = ours.to_model(name="benchmark", event="delirium within 5 days", horizon="5 days", population="demo")
    parts, _ = contributions(model, X_test.reset_index(drop=True))
    correlations = {}
    for name in FEATURES:
        truth = true_shape(name)(X_test[name].to_numpy(dtype=object if name in CATEGORICAL else float))
        fitted = parts[name].to_numpy()
        if np.std(truth) == 0 or np.std(fitted) == 0:
            correlations[name] = None  # a flat true term has no shape to correlate with
        else:
            correlations[name] = float(np.corrcoef(truth, fitted)[0, 1])
    return {
        "rows": rows,
        "auc": {"ours": auc_ours, "hist_gradient_boosting": auc_hgb, "logistic_regression": auc_lr},
        "fit_seconds": {"ours": t_ours, "hist_gradient_boosting": t_hgb, "logistic_regression": t_lr},
        "time_ratio_vs_hgb": t_ours / t_hgb,
        "cpu_seconds": {"ours": cpu_ours, "hist_gradient_boosting": cpu_hgb},
        "pairs_fitted": [f"{model.terms[i].name}" for i in range(len(model.terms)) if model.terms[i].kind == "pair"],
        "true_pair_rank": pair_rank,
        "top_pairs": ranking[:3],
        "shape_correlation": correlations,
        "rounds_one_feature": ours.fit_report_["rounds_one_feature"],
    }


def additive_cohort_pairs(rows: int, bags: int, seed: int) -> dict:
    frame = generate_cohort(rows, seed=seed + 1, interaction=False)
    cut = int(0.8 * rows)
    ours = AdditiveRiskClassifier(repeats=bags, pairs="auto", random_state=seed)
    _, seconds = timed(lambda: ours.fit(frame[FEATURES].iloc[:cut], frame[OUTCOME].iloc[:cut]))
    top = ours.pair_ranking_[0] if ours.pair_ranking_ else None
    return {"pairs_fitted": len(ours.pairs_), "fit_seconds": seconds, "top_pair": top and f"{top[0]} x {top[1]} (p={top[3]:.3g})"}


def breast_cancer_figures(bags: int) -> dict:
    # scikit-learn's bundled Wisconsin diagnostic breast-cancer data (569 patients, 30 measurements)
    X, y = load_breast_cancer(return_X_y=True, as_frame=True)
    folds = StratifiedKFold(n_splits=5, shuffle=True, random_state=0)
    ours, t_ours = timed(lambda: cross_val_score(AdditiveRiskClassifier(repeats=bags), X, y, cv=folds, scoring="roc_auc"))
    lr, _ = timed(lambda: cross_val_score(make_pipeline(StandardScaler(), LogisticRegression(max_iter=5000)), X, y, cv=folds, scoring="roc_auc"))
    hgb, _ = timed(lambda: cross_val_score(HistGradientBoostingClassifier(), X, y, cv=folds, scoring="roc_auc"))
    best = max(lr.mean(), hgb.mean())
    return {
        "auc_ours": float(ours.mean()),
        "auc_logistic_regression": float(lr.mean()),
        "auc_hist_gradient_boosting": float(hgb.mean()),
        "margin_vs_best": float(ours.mean() - best),
        "seconds_ours": t_ours,
    }


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=100_000)
    parser.add_argument("--repeats", dest="bags", type=lambda t: t if t == "auto" else int(t), default="auto")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--skip-additive", action="store_true")
    parser.add_argument("--skip-breast-cancer", action="store_true")
    args = parser.parse_args()

    demo = demo_figures(args.rows, args.bags, args.seed)
    auc = demo["auc"]
    print(f"demo cohort, {demo['rows']} rows (80/20 split), {args.bags} repeats")
    for key in ("ours", "hist_gradient_boosting", "logistic_regression"):
        print(f"  {key:24s} test AUC {auc[key]:.4f}   fit {demo['fit_seconds'][key]:7.2f} s")
    print(f"  AUC ours - HGB: {auc['ours'] - auc['hist_gradient_boosting']:+.4f} (target >= -0.003); "
          f"ours - LR: {auc['ours'] - auc['logistic_regression']:+.4f} (target > 0)")
    print(f"  fit time ratio ours / HGB: {demo['time_ratio_vs_hgb']:.2f} (target <= 3); CPU seconds ours "
          f"{demo['cpu_seconds']['ours']:.2f}, HGB {demo['cpu_seconds']['hist_gradient_boosting']:.2f} "
          f"(ratio {demo['cpu_seconds']['ours'] / demo['cpu_seconds']['hist_gradient_boosting']:.2f}; both use the 2 cores)")
    print(f"  machine load average while measuring: {os.getloadavg()[0]:.2f} on {os.cpu_count()} cores")
    print(f"  true pair {PAIR_TERM!r} rank: {demo['true_pair_rank']} (target 1); top: {demo['top_pairs']}; fitted: {demo['pairs_fitted']}")
    print(f"  rounds per repeat (one-feature terms): {demo['rounds_one_feature']}")
    print("  shape correlation with the true shape (density-weighted, target >= 0.95):")
    for name, r in demo["shape_correlation"].items():
        print(f"    {name:20s} {'flat true term' if r is None else f'{r:.4f}'}")
    if not args.skip_additive:
        add = additive_cohort_pairs(args.rows, args.bags, args.seed)
        print(f"no-interaction cohort: pairs fitted {add['pairs_fitted']} (target 0); top-ranked {add['top_pair']}; fit {add['fit_seconds']:.2f} s")
    if not args.skip_breast_cancer:
        bc = breast_cancer_figures(args.bags)
        print(
            f"breast cancer (569 patients, 5-fold AUC): ours {bc['auc_ours']:.4f}, LR {bc['auc_logistic_regression']:.4f}, "
            f"HGB {bc['auc_hist_gradient_boosting']:.4f}; ours - best {bc['margin_vs_best']:+.4f} (target >= -0.01); "
            f"{bc['seconds_ours']:.1f} s"
        )


if __name__ == "__main__":
    main()
