"""`scorecard quantize` through click's runner: a valid sheet, same bytes twice, exit 3 with figures, exit 2."""

import json

import numpy as np
import pandas as pd
import pytest
from click.testing import CliRunner

from quantize_models import small_model_dict
from scorecard.cli import main
from scorecard.sheet import load_sheet

FAST = ["--bootstrap", "0", "--max-rows", "6", "--max-total-points", "30", "--max-auc-loss", "0.02",
        "--risk-error-share", "0.2", "--min-band-agreement", "0.8", "--max-percentile-risk-error", "0.12"]


@pytest.fixture
def model_file(tmp_path):
    path = tmp_path / "small.model.json"
    path.write_text(json.dumps(small_model_dict()))
    return path


def run(*args):
    return CliRunner().invoke(main, ["quantize", *map(str, args)])


def test_writes_a_valid_sheet_with_the_same_bytes_twice(model_file, tmp_path):
    a, b = tmp_path / "a.sheet.json", tmp_path / "b.sheet.json"
    first = run(model_file, *FAST, "--bands", "low<10,moderate<30,high", "-o", a)
    assert first.exit_code == 0, first.output
    assert "fingerprint" in first.output and "certificate" in first.output
    assert run(model_file, *FAST, "--bands", "low<10,moderate<30,high", "-o", b).exit_code == 0
    assert a.read_bytes() == b.read_bytes()
    doc = load_sheet(a)
    assert [bd["upper_risk"] for bd in doc["bands"]] == [0.1, 0.3, None]
    assert doc["achieved"]["auc_loss"] <= 0.02 and doc["achieved"]["share_over_risk_error"] <= 0.2
    assert doc["total"]["max"] - doc["total"]["min"] <= 30
    for term in doc["terms"]:  # points are non-negative by default, each table starting at 0
        pts = [p for row in term["points"] for p in row] if term["kind"] == "pair" else [r["points"] for r in term["rows"]]
        assert min(pts) == 0
    albumin = next(t for t in doc["terms"] if t["name"] == "albumin")
    assert albumin["rows"][-1]["missing"] is True


def test_allow_negative_keeps_signed_points(model_file, tmp_path):
    out = tmp_path / "s.sheet.json"
    assert run(model_file, *FAST, "--allow-negative", "-o", out).exit_code == 0
    doc = load_sheet(out)
    assert any(r["points"] < 0 for t in doc["terms"] if t["kind"] != "pair" for r in t["rows"])


def test_data_option_uses_the_cohort(model_file, tmp_path):
    rng = np.random.default_rng(0)
    n = 1500
    cohort = pd.DataFrame({"age": rng.integers(60, 100, n), "sodium": rng.integers(125, 155, n),
                           "albumin": np.where(rng.random(n) < 0.3, np.nan, rng.integers(22, 48, n)),
                           "prior_delirium": rng.integers(0, 2, n), "residence": rng.choice(["home", "family", "care_home"], n),
                           "haemoglobin": rng.integers(75, 165, n)})
    csv = tmp_path / "cohort.csv"
    cohort.to_csv(csv, index=False)
    out = tmp_path / "s.sheet.json"
    res = run(model_file, "--data", csv, *FAST, "-o", out)
    assert res.exit_code == 0, res.output
    doc = load_sheet(out)
    # chosen on two thirds, confirmed on the held-out third; the held-out figures are the ones reported
    assert doc["achieved"]["n"] == 500 and doc["report"]["in_sample"]["n"] == 1000
    assert "500 held-out patients of the cohort's 1500" in doc["provenance"]["evaluation"]
    assert "1000 of the cohort's 1500" in doc["provenance"]["chosen_on"]
    _held_out_figures_match_outside_references(doc, cohort)


def _held_out_figures_match_outside_references(doc, cohort):
    """The stored held-out figures, recomputed here: the held-out patients' sheet risk read row by row from the
    document, the model's risk from predict_logodds, then scikit-learn's roc_auc_score (each patient an event
    with weight p and a non-event with weight 1 - p) and numpy's percentiles."""
    from sklearn.metrics import roc_auc_score

    from quantize_models import sheet_total
    from scorecard.model import model_from_dict, predict_logodds
    from scorecard.quantize.quantizer import split_populations

    model = model_from_dict(small_model_dict())
    _, held = split_populations(model, cohort.astype(object).where(cohort.notna(), None))
    frame = held.frame
    lo, _ = predict_logodds(model, frame)
    p = 1 / (1 + np.exp(-lo))
    risk_at = {c["total"]: c["risk"] for c in doc["conversion"]}
    q = np.array([risk_at[sheet_total(doc, {k: (np.nan if v is None else float(v) if k != "residence" else v)
                                             for k, v in row.items()})] for row in frame.to_dict("records")])
    y, w = np.r_[np.ones(len(p)), np.zeros(len(p))], np.r_[p, 1 - p]
    auc_model = roc_auc_score(y, np.r_[lo, lo], sample_weight=w)
    auc_sheet = roc_auc_score(y, np.r_[q, q], sample_weight=w)
    a = doc["achieved"]
    assert a["auc_loss"] == pytest.approx(auc_model - auc_sheet, abs=1e-9)
    err = np.abs(q - p)
    assert a["p95_abs_risk_error"] == pytest.approx(np.percentile(err, 95), abs=1e-9)
    assert a["max_abs_risk_error"] == pytest.approx(err.max(), abs=1e-9)
    assert a["mean_abs_risk_error"] == pytest.approx(err.mean(), abs=1e-9)
    _spread_matches_numpy_percentiles(doc, cohort, model)


def _spread_matches_numpy_percentiles(doc, cohort, model):
    """The spread stored per total (what the sheet prints beside each band) equals numpy's 10th and 90th
    percentiles of predict's model risk among the cohort's patients with that total."""
    from quantize_models import sheet_total
    from scorecard.model import predict_logodds

    frame = cohort.astype(object).where(cohort.notna(), None)
    lo, _ = predict_logodds(model, frame)
    p = 1 / (1 + np.exp(-lo))
    totals = np.array([sheet_total(doc, {k: (np.nan if v is None else float(v) if k != "residence" else v) for k, v in row.items()})
                       for row in frame.to_dict("records")])
    printed = _printed_ranges(doc)
    checked = 0
    for c in doc["conversion"]:
        sel = totals == c["total"]
        assert c["spread"]["patients"] == int(sel.sum())
        if sel.sum() >= 10:
            low, high = np.percentile(p[sel], [10, 90])
            assert c["spread"]["low"] == pytest.approx(low, abs=1e-9) and c["spread"]["high"] == pytest.approx(high, abs=1e-9)
            # and on paper: the range cell beside this total reads numpy's percentiles at the printed precision
            # (one decimal below 10 %, whole percent above: the sheet's risk rule); a percentile within 1e-6
            # of a rounding boundary may print either way
            lo_ok = {_pct(low - 1e-6), _pct(low + 1e-6)}
            hi_ok = {_pct(high - 1e-6), _pct(high + 1e-6)}
            lo_text, hi_text = printed[c["total"]].split("\u2013")
            assert lo_text + "%" in lo_ok and hi_text in hi_ok, (c["total"], printed[c["total"]], low, high)
            checked += 1
        else:
            assert c["spread"]["low"] is None and printed[c["total"]] == "\u2013"
    assert checked >= 5


def _pct(risk: float) -> str:
    """A risk as the sheet prints it, written here from docs/sheet-document.md: one decimal place below 10 %,
    whole percent from 10 %, rounded half up."""
    from decimal import ROUND_HALF_UP, Decimal

    risk = float(risk)
    one = (Decimal(repr(risk)) * 100).quantize(Decimal("0.1"), rounding=ROUND_HALF_UP)
    if one < 10:
        return f"{one}%"
    return f"{(Decimal(repr(risk)) * 100).quantize(Decimal('1'), rounding=ROUND_HALF_UP)}%"


def _printed_ranges(doc) -> dict[int, str]:
    """{total: the range cell printed beside it} read from the ward-a4 PDF with pdfplumber: each conversion
    row's words, grouped under the Total | Risk | Range headings."""
    import io

    import pdfplumber

    from scorecard.render import load_layout, render_pdf
    from scorecard.sheet import sheet_fingerprint, short_fingerprint

    sheet = {**doc, "fingerprint": doc.get("fingerprint") or sheet_fingerprint(doc)}
    data = render_pdf(sheet, load_layout("ward-a4"), short_fingerprint(sheet))
    out: dict[int, str] = {}
    with pdfplumber.open(io.BytesIO(data)) as pdf:
        for page in pdf.pages:
            words = page.extract_words()
            heads = [w for w in words if w["text"] == "Range"]
            for head in heads:  # one Range heading per group of columns
                totals = [w for w in words if w["top"] > head["top"] + 2 and w["x1"] < head["x0"] - 40
                          and w["x1"] > head["x0"] - 140 and w["text"].lstrip("-\u2212").isdigit()]
                for t in totals:
                    cell = [w for w in words if abs(w["top"] - t["top"]) < 2 and head["x0"] - 25 < w["x1"] <= head["x1"] + 2]
                    if cell:
                        out.setdefault(int(t["text"]), cell[-1]["text"])
    assert set(out) == {c["total"] for c in doc["conversion"]}, sorted(out)
    return out


def test_infeasible_bound_exits_3_with_best_figures(model_file, tmp_path):
    out = tmp_path / "s.sheet.json"
    res = run(model_file, "--bootstrap", "0", "--max-rows", "2", "--max-total-points", "5", "--max-auc-loss", "0.0001", "-o", out)
    assert res.exit_code == 3
    line = res.output.strip().splitlines()[-1]
    assert line.startswith("check failed: no sheet") and "best achievable misses: " in line and "ΔAUC" in line and "--max-auc-loss" in line.split("relax")[1]
    assert not out.exists()


@pytest.mark.parametrize("args,message", [
    (["--max-auc-loss", "-0.1"], "--max-auc-loss"),
    (["--max-risk-error", "0"], "--max-risk-error"),
    (["--risk-error-share", "1.5"], "--risk-error-share"),
    (["--max-rows", "0"], "--max-rows"),
    (["--max-total-points", "0"], "--max-total-points"),
    (["--bands", "low<5,moderate<20"], "--bands"),
    (["--bands", "low<20,moderate<5,high"], "--bands"),
    (["--bands", "low<abc,high"], "--bands"),
    (["--max-rows", "many"], "many"),
    (["--min-band-agreement", "1.5"], "--min-band-agreement"),
    (["--min-band-agreement", "most"], "most"),
    (["--max-percentile-risk-error", "0"], "--max-percentile-risk-error"),
    (["--max-largest-risk-error", "-0.2"], "--max-largest-risk-error"),
    (["--risk-error-percentile", "120"], "--risk-error-percentile"),
])
def test_bad_options_exit_2(model_file, tmp_path, args, message):
    res = run(model_file, *args, "-o", tmp_path / "s.sheet.json")
    assert res.exit_code == 2, res.output
    assert message in res.output and "Traceback" not in res.output


def test_bad_files_exit_2(model_file, tmp_path):
    res = run(model_file, "-o", model_file)
    assert res.exit_code == 2 and "input" in res.output
    res = run(tmp_path / "nope.json", "-o", tmp_path / "s.json")
    assert res.exit_code == 2 and "nope.json" in res.output
    csv = tmp_path / "c.csv"
    csv.write_text("age,sodium\n70,140\n")
    res = run(model_file, "--data", csv, "-o", tmp_path / "s.json")
    assert res.exit_code == 2 and "albumin" in res.output



def test_frontier_is_printed_stored_and_plotted(model_file, tmp_path):
    out, png = tmp_path / "s.sheet.json", tmp_path / "frontier.png"
    res = run(model_file, *FAST, "--frontier-plot", png, "-o", out)
    assert res.exit_code == 0, res.output
    rows = load_sheet(out)["report"]["frontier"]
    assert rows and all({"printed_rows", "total_points", "p95_abs_risk_error", "max_abs_risk_error", "meets_bound"} <= set(r) for r in rows)
    assert "alternative sheets" in res.output and png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert any(r["meets_bound"] for r in rows)  # the chosen sheet's limits are among them


def test_exit_3_names_the_nearest_passing_sheet_and_writes_it_on_request(model_file, tmp_path):
    out, near = tmp_path / "s.sheet.json", tmp_path / "near.sheet.json"
    args = ["--bootstrap", "0", "--max-rows", "6", "--max-total-points", "12", "--max-auc-loss", "0.02",
            "--risk-error-share", "0.2", "--max-percentile-risk-error", "0.10"]
    plain = run(model_file, *args, "-o", out)
    assert plain.exit_code == 3 and "the nearest sheet that meets it" in plain.output and not near.exists()
    asked = run(model_file, *args, "--write-nearest", near, "-o", out)
    assert asked.exit_code == 3 and not out.exists()
    doc = load_sheet(near)
    assert doc["total"]["max"] - doc["total"]["min"] > 12 and doc["achieved"]["p95_abs_risk_error"] <= 0.10
