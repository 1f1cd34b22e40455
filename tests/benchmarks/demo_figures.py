"""Measure the demo generator's documented figures (TRUE_AUC, TRUE_EVENT_RATE in scorecard/demo/measures.py).

Run: /work/venv/bin/python tests/benchmarks/demo_figures.py [ROWS]   (default 4,000,000; about a minute)
Also prints the time to generate the cohort against the time to score it with the true model (same run).
"""

import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))  # run from a checkout without installing

from scorecard.demo import OUTCOME, TRUE_AUC, TRUE_EVENT_RATE, generate_cohort, rank_auc, true_model
from scorecard.model import predict_logodds


def main(rows: int) -> None:
    for interaction in (True, False):
        start = time.perf_counter()
        cohort = generate_cohort(rows, seed=0, interaction=interaction)
        generated = time.perf_counter() - start
        start = time.perf_counter()
        logodds, _ = predict_logodds(true_model(interaction), cohort)
        scored = time.perf_counter() - start
        auc = rank_auc(cohort[OUTCOME].to_numpy(), logodds)
        rate = float(cohort[OUTCOME].mean())
        print(
            f"interaction={interaction}: {rows} patients; AUC {auc:.4f} (documented {TRUE_AUC[interaction]}), "
            f"event rate {rate:.4f} (documented {TRUE_EVENT_RATE[interaction]}); "
            f"generate {generated:.2f} s, score {scored:.2f} s, ratio generate/score {generated / scored:.2f}"
        )


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 4_000_000)
