"""The pair rule at large n (issue 13): on a 1,000,000-patient demo cohort `pairs="auto"` must keep only the
generator's true pair (`age x cognition`: age with cognitive screen score, docs/demo-cohort.md), and at
40,000 (--rows 40000) still keep it. Prints the ten best-ranked pairs (by their JSON names) with their
held-out p-value and held-out gain per patient, which pairs the rule keeps, and which the significance test
alone would keep; asserts nothing. Figures: docs/fitting.md, "Pairs at large n".

    nice -n 10 .venv/bin/python tests/benchmarks/bench_pair_rule.py [--rows 1000000] [--repeats 12]

Fewer --repeats make it quicker on a busy machine: the ranking is taken on the repeat-mean one-feature
model, and the pair rule does not depend on the number of repeats beyond that model's noise.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from scorecard.demo import FEATURES, OUTCOME, PAIR_TERM, generate_cohort  # noqa: E402
from scorecard.fit import AdditiveRiskClassifier, defaults  # noqa: E402


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--repeats", default="auto", type=lambda t: t if t == "auto" else int(t))
    parser.add_argument("--seed", type=int, default=2)
    args = parser.parse_args()
    frame = generate_cohort(args.rows, seed=args.seed, interaction=True)
    start = time.perf_counter()
    est = AdditiveRiskClassifier(repeats=args.repeats, random_state=args.seed).fit(frame[FEATURES], frame[OUTCOME])
    seconds = time.perf_counter() - start
    bound = defaults.PAIR_SIGNIFICANCE / len(est.pair_ranking_)
    print(f"demo cohort, {args.rows:,} patients, {est.settings_used_['repeats']} repeats, fit {seconds:.0f} s; "
          f"true pair {PAIR_TERM}; test bound p < {bound:.2g}, minimum gain {defaults.PAIR_MIN_GAIN} nats per patient")
    print("| pair | FAST gain | held-out p | held-out gain per patient | test passes | kept |")
    print("| --- | ---: | ---: | ---: | --- | --- |")
    kept = {f"{est.column_names_[p.first]} x {est.column_names_[p.second]}" for p in est.pairs_}
    for a, b, gain, p, held in est.pair_ranking_[:10]:
        name = f"{a} x {b}"
        print(f"| {name} | {gain:.1f} | {p:.2g} | {held:.6f} | {'yes' if p < bound else 'no'} | {'yes' if name in kept else 'no'} |")
    passing = [f"{a} x {b}" for a, b, g, p, _ in est.pair_ranking_ if p < bound and g > 0][: defaults.MAX_PAIRS]
    print(f"kept: {', '.join(sorted(kept)) or 'none'} (only the true pair: {'yes' if kept == {PAIR_TERM} else 'NO'}); "
          f"the test alone would keep: {', '.join(passing) or 'none'}")


if __name__ == "__main__":
    main()
