"""The review PDF: one page per term plus the summary, the same bytes every time, cautions on every page; the
summary's table of effects on the sheet, the patient strip inside each shape plot, the default sheet's rows
drawn as steps, small multiples for a pair, and pair names in words."""

from __future__ import annotations

import numpy as np
import pdfplumber
import pypdfium2
import pytest

from scorecard.model import load_model, model_from_dict, save_model

KEPT = ["albumin", "residence", "geriatric_review", "age x cognition"]


@pytest.fixture(scope="module")
def small_model_path(care_model, review_dir, run_cli):
    """Four terms of the care model, one of each kind (step shape with a not-measured score, levels, flag, pair), marked."""
    doc = care_model.to_dict()
    doc["terms"] = [t for t in doc["terms"] if t["name"] in KEPT]
    path = review_dir / "small.model.json"
    save_model(model_from_dict(doc), path)
    marked = review_dir / "small-marked.model.json"
    assert run_cli("edit", path, "--declare", "geriatric_review=care_process", "-o", marked).exit_code == 0
    return marked


@pytest.fixture(scope="module")
def rendered(small_model_path, cohort_csv, review_dir, run_cli):
    first = review_dir / "review-a.pdf"
    second = review_dir / "review-b.pdf"
    previews = review_dir / "previews"
    a = run_cli("review", small_model_path, "--data", cohort_csv, "-o", first, "--preview", previews)
    assert a.exit_code == 0, a.output
    b = run_cli("review", small_model_path, "--data", cohort_csv, "-o", second)
    assert b.exit_code == 0, b.output
    return first, second, previews, a


def test_review_is_deterministic_and_has_one_page_per_term_plus_the_summary(rendered, small_model_path):
    first, second, previews, _ = rendered
    assert first.read_bytes() == second.read_bytes()
    model = load_model(small_model_path)
    pdf = pypdfium2.PdfDocument(str(first))
    assert len(pdf) == len(model.terms) + 1
    pdf.close()
    assert sorted(p.name for p in previews.iterdir()) == [f"review-a-page-{i:02d}.png" for i in range(1, len(model.terms) + 2)]


def test_every_page_carries_the_cautions_and_the_fingerprint_and_its_term(rendered, small_model_path):
    first, *_ = rendered
    model = load_model(small_model_path)
    with pdfplumber.open(first) as pdf:
        texts = [page.extract_text() or "" for page in pdf.pages]
    for text in texts:
        flat = " ".join(text.split())
        assert "Decision support only" in flat and "associations, not causes" in flat
        assert "licensed clinicians" in flat and "approved version" in flat
        assert model.fingerprint in flat.replace(" ", "")
        assert f"{model.name} version {model.version}." in flat  # not a bare "name 1." the reader must decode
    assert "Review summary" in texts[0] and "Care-process marker looks protective" in texts[0]
    for term, text in zip(model.terms, texts[1:]):
        if term.kind == "pair":  # named in words on every page, never by its JSON name
            assert "Term Age with cognitive screen score" in text
        else:
            assert f"Term {term.name}" in text
    assert not any("age x cognition" in " ".join(t.split()) for t in texts)


def test_flags_are_also_listed_on_stderr(rendered):
    *_, result = rendered
    assert "flag protective_care_marker [geriatric_review]" in result.stderr


def test_flags_that_do_not_fit_continue_on_another_summary_page(care_model):
    from scorecard.review.plots import summary_page
    from scorecard.review.flags import Flag, FlagSettings
    from scorecard.review.importance import rank_terms

    many = [Flag("sparse_data", "sodium", f"invented flag number {i} " + "with a long explanation " * 6) for i in range(60)]
    _, left = summary_page(care_model, rank_terms(care_model), many, FlagSettings(), "test")
    assert 0 < len(left) < 60 and left == many[60 - len(left):]
    _, rest = summary_page(care_model, None, left, FlagSettings(), "test")
    assert len(rest) < len(left)


# -- the layout of our own: effect table, patient strip, sheet steps, small multiples ------------------------------


@pytest.fixture(scope="module")
def pages(small_model_path, cohort_frame):
    """The review figures of the small model on the 1500-patient cohort, with the default sheet previewed,
    and that sheet made separately by the quantize stage's public entry (the rows the steps must equal)."""
    from scorecard.quantize import quantize_model
    from scorecard.review.report import build_review

    model = load_model(small_model_path)
    figures, ranking, flags = build_review(model, cohort_frame, cohort_name="cohort.csv")
    sheet = quantize_model(model, data=cohort_frame, bootstrap=0)
    return model, figures, ranking, sheet


def _sheet_range(term: dict) -> int:
    if term["kind"] == "pair":
        values = [p for row in term["points"] for p in row] + [term["missing_points"]]
    else:
        values = [r["points"] for r in term["rows"]]
    return max(values) - min(values)


def test_terms_are_ranked_by_their_points_on_the_default_sheet_then_by_spread_of_risk(pages):
    model, figures, ranking, sheet = pages
    on_sheet = {t["name"]: _sheet_range(t) for t in sheet["terms"]}
    assert [r.points_range for r in ranking] == [on_sheet.get(r.term, 0) for r in ranking]
    keys = [(r.points_range, r.risk_spread) for r in ranking]
    assert keys == sorted(keys, key=lambda k: (-k[0], -k[1]))
    left_off = {d["name"] for d in sheet["dropped_terms"]}
    assert {r.term for r in ranking if r.left_off} == left_off
    # a table of printed numbers, not a bar chart: the summary page has no axes at all
    assert figures[0].axes == []
    texts = [t.get_text() for t in figures[0].texts]
    assert "Terms ranked by their effect on the sheet" in texts and "points" in texts and "risk spread" in texts
    for r in ranking:
        assert (f"{r.points_range}" if not r.left_off else "0, left off") in texts
        assert f"{100 * r.risk_spread:.1f} pp" in texts


def test_the_spread_of_risk_uses_the_plain_percentiles_of_the_contributions(pages, cohort_frame):
    # reference: numpy's inverted-CDF percentile (Hyndman & Fan definition 1) equals our weighted percentile
    # at unit weights; the risk spread is then logistic(m + p95) - logistic(m + p05)
    from scorecard.model import contributions, logistic
    from scorecard.review.importance import weighted_percentile

    model, _, ranking, _ = pages
    parts, _ = contributions(model, cohort_frame)
    m = model.intercept + parts.to_numpy().sum(axis=1).mean()
    for r in ranking:
        v = parts[r.term].to_numpy()
        lo, hi = np.percentile(v, [5, 95], method="inverted_cdf")
        assert r.low == pytest.approx(lo, abs=1e-12) and r.high == pytest.approx(hi, abs=1e-12)
        assert r.risk_spread == pytest.approx(float(logistic(np.array([m + hi]))[0] - logistic(np.array([m + lo]))[0]), abs=1e-12)
    rng = np.random.default_rng(3)
    values, weights = rng.normal(size=50), rng.integers(1, 4, size=50)
    assert weighted_percentile(values, weights, 40) == np.percentile(np.repeat(values, weights), 40, method="inverted_cdf")


def _term_figure(model, figures, name):
    return figures[1 + [t.name for t in model.terms].index(name)]


def test_patient_counts_are_a_strip_inside_the_shape_plot_not_a_histogram_below(pages):
    model, figures, *_ = pages
    for name in ("albumin", "residence"):
        fig = _term_figure(model, figures, name)
        shape = fig.axes[0]
        strips = [c for c in shape.collections if c.get_gid() == "patient-strip"]
        assert strips, f"{name}: no patient strip"
        low, high = shape.get_ylim()
        for c in strips:
            ys = np.concatenate([p.vertices[:, 1] for p in c.get_paths()])
            assert low - 1e-9 <= ys.min() and ys.max() <= high + 1e-9  # inside the plot's own axes
        # no other plot below the shape: the only other axes is the not-measured panel beside it
        below = [ax for ax in fig.axes[1:] if ax.get_position().y1 <= shape.get_position().y0 + 1e-9]
        assert below == []
        # the strip sits below everything the plot draws
        strip_top = max(np.concatenate([p.vertices[:, 1] for c in strips for p in c.get_paths()]))
        drawn = [float(np.min(line.get_ydata())) for line in shape.lines]
        drawn += [min(b.get_y(), b.get_y() + b.get_height()) for b in shape.patches if hasattr(b, "get_height")]
        assert drawn and strip_top <= min(drawn) + 1e-9


def test_the_steps_are_the_rows_the_quantiser_prints(pages):
    from scorecard.sheet.printed import read_units

    model, figures, _, sheet = pages
    block = next(t for t in sheet["terms"] if t["name"] == "albumin")
    fig = _term_figure(model, figures, "albumin")
    steps = [line for line in fig.axes[0].lines if line.get_gid() == "sheet-steps"]
    assert len(steps) == 1
    xs, ys = steps[0].get_xdata(), steps[0].get_ydata()
    per_point = sheet["scale"]["logodds_per_point"]
    measured = [r for r in block["rows"] if not r.get("missing")]
    seen = []
    for x, y in zip(xs, ys):  # every x is read as the sheet reads it (rounded or completed units) into its row
        v = read_units(x, block["decimals"], block.get("reading", "rounded"))
        row = next(r for r in measured if (r["lower"] is None or round(r["lower"] * 10 ** block["decimals"]) <= v)
                   and (r["upper"] is None or v < round(r["upper"] * 10 ** block["decimals"])))
        seen.append((row["points"], y))
    shift = {round(y - p * per_point, 9) for p, y in seen}
    assert len(shift) == 1  # one constant per term: the rows' points times log-odds per point, nothing else
    inside = [r for r in measured if (r["lower"] is None or r["lower"] < xs.max()) and (r["upper"] is None or r["upper"] > xs.min())]
    assert {p for p, _ in seen} == {r["points"] for r in inside}  # every row inside the plot is drawn


def test_a_pair_is_drawn_as_small_multiples_not_a_heat_map(pages):
    from matplotlib.collections import QuadMesh

    model, figures, *_ = pages
    pair = next(t for t in model.terms if t.kind == "pair")
    fig = _term_figure(model, figures, pair.name)
    assert len(fig.axes) >= 2 and not any(isinstance(c, QuadMesh) for ax in fig.axes for c in ax.collections)
    titles = [ax.get_title(loc="left") for ax in fig.axes]
    assert all(t.startswith("Cognitive screen score") for t in titles), titles  # one panel per group of the other feature
    assert all(any(c.get_gid() == "patient-strip" for c in ax.collections) for ax in fig.axes)
    ylims = {ax.get_ylim() for ax in fig.axes}
    assert len(ylims) == 1  # one log-odds scale for every panel, so they compare


def test_pair_steps_follow_the_sheet_grid_when_the_pair_is_printed(small_model_path, cohort_frame):
    # a tighter bound keeps the pair on the sheet; each panel's steps are that grid row's points
    from scorecard.quantize import Bound, quantize_model
    from scorecard.review.flags import FlagSettings
    from scorecard.review.importance import rank_terms
    from scorecard.review.plots import term_page
    from scorecard.review.preview import preview_of_sheet

    model = load_model(small_model_path)
    sheet = quantize_model(model, data=cohort_frame, bootstrap=0,
                           bound=Bound(max_auc_loss=0.002, max_percentile_risk_error=0.03, max_total_points=100))
    grid = next((t for t in sheet["terms"] if t["kind"] == "pair"), None)
    assert grid is not None, "the tighter bound should keep the pair"
    from scorecard.sheet.printed import term_label

    assert grid["label"] == term_label(model, grid["name"]) == "Age with cognitive screen score (0–10)"  # the sheet's heading
    preview = preview_of_sheet(model, cohort_frame, sheet)
    pair = model.term(grid["name"])
    effect = {r.term: r for r in rank_terms(model, cohort_frame, preview)}[pair.name]
    fig = term_page(model, pair, cohort_frame, effect, [], FlagSettings(), preview)
    per_point = sheet["scale"]["logodds_per_point"]
    shift = preview.terms[pair.name].shift
    along = [a["feature"] for a in grid["axes"]].index("age")
    rows_of_panels = grid["points"] if along == 1 else [list(c) for c in zip(*grid["points"])]
    assert len(fig.axes) == len(rows_of_panels)
    for ax, points in zip(fig.axes, rows_of_panels):
        drawn = {round((y - shift) / per_point, 6) for line in ax.lines if line.get_gid() == "sheet-steps" for y in line.get_ydata()}
        assert drawn == {float(p) for p in points}, (ax.get_title(loc="left"), drawn, points)
