"""The review PDF: one page per term plus the summary, the same bytes every time, cautions on every page."""

from __future__ import annotations

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
        assert f"Term {term.name}" in text


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
