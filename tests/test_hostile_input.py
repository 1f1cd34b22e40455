"""Hostile and careless input, tried on every verb that reads it: one line, exit 2 (or 3 where a check ran and
failed), nothing written. Each case is a way the tool once ended in a traceback or accepted a wrong document."""

from __future__ import annotations

import copy
import json

import pandas as pd
import pytest
from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from scorecard.cli import main
from scorecard.errors import UserError
from scorecard.jsondoc import pretty_text
from scorecard.model import model_from_dict
from tests.audit.handmade import sheet_dict, write_handmade_files

DEMO_MODEL = "example_models/demo-true.model.json"


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def one_line_error(result, expected: str, code: int = 2) -> str:
    assert result.exit_code == code, result.output
    lines = result.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and expected in lines[0], result.output
    return lines[0]


@pytest.fixture()
def files(tmp_path):
    """The hand-made sheet and its model (tests/audit/handmade.py) and a cohort they can score."""
    return write_handmade_files(tmp_path, rows=300)


def _verbs(f, model, sheet):
    """Every verb that reads a model or a sheet document, with the rest of its arguments valid."""
    out = f / "out"
    return {
        "predict": ["predict", model, f / "cohort.csv", "-o", f"{out}.csv"],
        "review": ["review", model, "-o", f"{out}.pdf"],
        "explain": ["explain", model, "--values", "age=80"],
        "quantize": ["quantize", model, "-o", f"{out}.sheet.json"],
        "edit": ["edit", model, "--remove-effect", "age", "-o", f"{out}.model.json"],
        "render": ["render", sheet, "-o", f"{out}.pdf"],
        "score": ["score", sheet, f / "cohort.csv", "-o", f"{out}.csv"],
        "check": ["check", sheet, "--model", f / "model.json", "--data", f / "cohort.csv", "-o", f"{out}.pdf"],
        "verify": ["verify", f / "missing.pdf", "--sheet", sheet],
        "approve": ["approve", sheet, "--key", f / "missing.pem", "--name", "Dr A (invented)", "-o", f"{out}.sheet.json"],
        "compare": ["compare", sheet, f / "sheet.json", "-o", f"{out}.pdf"],
        "recalibrate": ["recalibrate", sheet, "--data", f / "cohort.csv", "--outcome", "delirium", "-o", f"{out}.sheet.json"],
        "exercise": ["exercise", sheet, "-n", "5", "-o", f"{out}.pdf", "--key", f"{out}.csv"],
        "export": ["export", sheet, "--format", "pmml", "-o", f"{out}.pmml"],
    }


HOSTILE_FILES = {
    # 5,000 nested arrays made every verb recurse until Python gave up
    "deep": ("[" * 5000 + "]" * 5000, "nests deeper than 64 levels"),
    # 10**400 does not fit a float; a 5,000-digit integer hit Python's integer-string limit
    "huge integer": ('{"intercept": 1' + "0" * 400 + "}", "more than 40 digits"),
    "5000 digits": ('{"a": ' + "7" * 5000 + "}", "more than 40 digits"),
    # JSON keeps the last of two equal keys without a word: a second "intercept" would change every risk
    "duplicate key": ('{"intercept": -2, "intercept": 5}', 'the field "intercept" is given twice'),
}
EVERY_DOCUMENT_VERB = ["predict", "review", "explain", "quantize", "edit", "render", "score", "check", "verify",
                       "approve", "compare", "recalibrate", "exercise", "export"]
MODEL_VERBS = ("predict", "review", "explain", "quantize", "edit")


@pytest.mark.parametrize("case", sorted(HOSTILE_FILES))
@pytest.mark.parametrize("verb", EVERY_DOCUMENT_VERB)
def test_hostile_documents_are_one_line_on_every_verb(files, verb, case):
    text, expected = HOSTILE_FILES[case]
    bad = files / "bad.json"
    bad.write_text(text)
    model = bad if verb in MODEL_VERBS else files / "model.json"
    sheet = bad if model != bad else files / "sheet.json"
    one_line_error(run(*_verbs(files, model, sheet)[verb]), expected)
    assert not list(files.glob("out*"))


def _model_with(change) -> dict:
    doc = json.load(open(DEMO_MODEL))
    change(doc)
    return doc


def _term(doc, kind):
    return next(t for t in doc["terms"] if t["kind"] == kind)


def _feature(doc, kind):
    return next(f for f in doc["features"] if f["kind"] == kind)


BAD_MODELS = [
    # an intercept of 800 or 1e308 made quantize fail on a singular matrix
    ("intercept 800", lambda d: d.update(intercept=800), "intercept: 800 is beyond ±100 log-odds"),
    ("intercept 1e308", lambda d: d.update(intercept=1e308), "intercept: 1e+308 is beyond ±100 log-odds"),
    ("score 1e20", lambda d: _term(d, "continuous")["scores"].__setitem__(0, 1e20), "scores[0]: 1e+20 is beyond ±100"),
    # bin edges of ±1e308 gave review NaN axis limits; a 1e308 training range hid a 2.77 log-odds effect
    ("edge 1e308", lambda d: _term(d, "continuous")["edges"].__setitem__(-1, 1e308), "is beyond ±1e+09 for a measurement"),
    ("range 1e308", lambda d: _feature(d, "continuous")["training_range"].update(max=1e308), "training_range[1]: 1e+308 is beyond"),
    ("negative spread", lambda d: _term(d, "continuous").update(spread=[-0.1] * len(_term(d, "continuous")["scores"])),
     "spread[0]: -0.1 is negative"),
    ("whitespace level", lambda d: _feature(d, "categorical")["levels"].__setitem__(0, "   "), "only spaces"),
    ("spaced level", lambda d: _feature(d, "categorical")["levels"].__setitem__(0, " home"), "spaces at its ends"),
    # U+FEFF in a label broke matplotlib inside review; right-to-left overrides and control characters printed
    # a sheet that the tool's own verify then failed
    ("BOM label", lambda d: _feature(d, "flag").update(label="\ufeffPrior delirium"), "U+FEFF"),
    ("RLO label", lambda d: _feature(d, "flag").update(label="Prior \u202edelirium"), "U+202E"),
    ("bell in name", lambda d: d.update(name="demo\x07"), "name: holds U+0007 (a control character)"),
]


@pytest.mark.parametrize("name, change, expected", BAD_MODELS, ids=[c[0] for c in BAD_MODELS])
def test_a_wrong_model_is_refused_at_load_naming_the_field(tmp_path, name, change, expected):
    path = tmp_path / "bad.model.json"
    path.write_text(json.dumps(_model_with(change), ensure_ascii=False))
    for verb in (["predict", path, tmp_path / "c.csv", "-o", tmp_path / "o.csv"], ["quantize", path, "-o", tmp_path / "o.json"],
                 ["review", path, "-o", tmp_path / "o.pdf"]):
        one_line_error(run(*verb), expected)
    assert not list(tmp_path.glob("o.*"))


def _sheet_with(change) -> dict:
    doc = sheet_dict()
    change(doc)
    return doc


BAD_SHEETS = [
    # points above the largest total, or below the smallest, have no risk: score and check refused them, render
    # and verify printed them
    ("points above the table", lambda d: d["terms"][0]["rows"][-1].update(points=d["total"]["max"] + 5), "cover only"),
    ("negative points", lambda d: d["terms"][0]["rows"][0].update(points=-3), "cover only"),
    ("raised minimum", lambda d: (d["total"].update(min=1), d["conversion"].pop(0)), "cover only"),
    # points of 10**20 made score overflow and render run for minutes
    ("points 1e20", lambda d: d["terms"][0]["rows"][0].update(points=10**20), "is greater than the maximum of 100000"),
    ("RLO title", lambda d: d.update(title="Delirium \u202erisk"), "title: holds U+202E"),
    ("BOM in a row", lambda d: d["terms"][0]["rows"][0].update(text="\ufeff" + d["terms"][0]["rows"][0]["text"]), "U+FEFF"),
]


@pytest.mark.parametrize("name, change, expected", BAD_SHEETS, ids=[c[0] for c in BAD_SHEETS])
def test_a_wrong_sheet_is_refused_at_load_by_every_verb(files, name, change, expected):
    (files / "bad.sheet.json").write_text(pretty_text(_sheet_with(change)))
    verbs = _verbs(files, files / "model.json", files / "bad.sheet.json")
    for verb in ("render", "score", "check", "verify"):
        one_line_error(run(*verbs[verb]), expected)
    assert not list(files.glob("out*"))


def test_a_sheet_number_too_large_for_a_float_is_named(files):
    text = pretty_text(sheet_dict()).replace('"logodds_per_point": 0.25', '"logodds_per_point": 1e400')
    assert "1e400" in text
    (files / "bad.sheet.json").write_text(text)
    one_line_error(run("render", files / "bad.sheet.json", "-o", files / "out.pdf"), "the number 1e400 is too large")


def test_a_byte_order_mark_before_the_document_is_read_past(files):
    # some editors save UTF-8 with a BOM (U+FEFF) first; Python's json refused it with 'decode using utf-8-sig'
    (files / "bom.model.json").write_bytes(b"\xef\xbb\xbf" + (files / "model.json").read_bytes())
    result = run("predict", files / "bom.model.json", files / "cohort.csv", "-o", files / "out.csv")
    assert result.exit_code == 0, result.output


def test_a_long_value_is_quoted_short_in_the_error_line(files):
    doc = sheet_dict()
    doc["terms"][0]["rows"][0]["text"] = "Z" * 2000
    (files / "bad.sheet.json").write_text(pretty_text(doc))
    line = one_line_error(run(*_verbs(files, files / "model.json", files / "bad.sheet.json")["render"]),
                          "terms[0].rows[0].text: 'ZZZ")
    assert "(2,002 characters) does not match the range" in line and len(line) < 300


DATA_VERBS = {
    "fit": lambda f, data: ["fit", data, "--outcome", "delirium", "-o", f / "out.model.json", "--repeats", "1"],
    "predict": lambda f, data: ["predict", f / "model.json", data, "-o", f / "out.csv"],
    "score": lambda f, data: ["score", f / "sheet.json", data, "-o", f / "out.csv"],
    "check": lambda f, data: ["check", f / "sheet.json", "--model", f / "model.json", "--data", data, "-o", f / "out.pdf"],
    "recalibrate": lambda f, data: ["recalibrate", f / "sheet.json", "--data", data, "--outcome", "delirium",
                                    "-o", f / "out.sheet.json"],
    "compare": lambda f, data: ["compare", f / "sheet.json", f / "sheet.json", "--data", data, "-o", f / "out.pdf"],
    "review": lambda f, data: ["review", f / "model.json", "--data", data, "-o", f / "out.pdf"],
}


@pytest.mark.parametrize("verb", sorted(DATA_VERBS))
def test_headers_that_differ_only_by_spaces_are_refused_by_every_verb(files, verb):
    # pandas keeps 'age' and 'age ' apart; once names are stripped they were one key (a factorize TypeError)
    frame = pd.read_csv(files / "cohort.csv")
    frame.insert(1, "age ", frame["age"])
    frame.to_csv(files / "twice.csv", index=False)
    line = one_line_error(run(*DATA_VERBS[verb](files, files / "twice.csv")),
                          "columns 'age' and 'age ' are the same name once spaces are removed")
    assert "twice.csv" in line and not list(files.glob("out*"))


def test_check_on_a_single_patient_is_refused_not_passed(files):
    pd.read_csv(files / "cohort.csv").head(1).to_csv(files / "one.csv", index=False)
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "one.csv",
                 "--outcome", "delirium", "-o", files / "out.pdf")
    one_line_error(result, "1 patient(s); agreement needs at least 2")
    assert "pass" not in result.output and not (files / "out.pdf").exists()


def test_every_outcome_zero_gives_not_estimable_instead_of_a_number(files):
    frame = pd.read_csv(files / "cohort.csv")
    frame["delirium"] = 0
    frame.to_csv(files / "zeros.csv", index=False)
    result = run("check", files / "sheet.json", "--model", files / "model.json", "--data", files / "zeros.csv",
                 "--outcome", "delirium", "-o", files / "out.pdf", "--json", files / "out.json", "--bootstrap", "20")
    assert result.exit_code in (0, 3), result.output
    against = json.loads((files / "out.json").read_text())["against_outcomes"]
    for who in ("model", "sheet"):
        # with no event the logistic recalibration has no finite maximum (it ran to -51 before)
        assert against[who]["calibration_intercept"] is None and against[who]["calibration_slope"] is None
        assert against[who]["auc"] is None
    import pdfplumber

    with pdfplumber.open(files / "out.pdf") as pdf:
        text = " ".join(page.extract_text() or "" for page in pdf.pages)
    assert "not estimable" in text


# -- fuzz: any value in any field of a model document is either a model or one UserError line --------------

def _paths(value, prefix=()):
    yield prefix
    if isinstance(value, dict):
        for k, v in value.items():
            yield from _paths(v, prefix + (k,))
    elif isinstance(value, list):
        for i, v in enumerate(value[:3]):
            yield from _paths(v, prefix + (i,))


_BASE = json.load(open(DEMO_MODEL))
_PATHS = [p for p in _paths(_BASE) if p and p[0] != "provenance"]
_JSON = st.recursive(st.none() | st.booleans() | st.integers(-10**30, 10**30) | st.floats(allow_nan=True)
                     | st.text(max_size=12), lambda inner: st.lists(inner, max_size=3)
                     | st.dictionaries(st.text(max_size=5), inner, max_size=3), max_leaves=6)


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(path=st.sampled_from(_PATHS), value=_JSON)
def test_fuzzed_model_fields_give_a_model_or_one_user_error(path, value):
    doc = copy.deepcopy(_BASE)
    place = doc
    for key in path[:-1]:
        place = place[key]
    place[path[-1]] = value
    try:
        model_from_dict(doc)
    except UserError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("model: ")


@pytest.mark.parametrize("verb, option", [("fit", "--pair-min-gain"), ("fit", "--learning-rate"),
                                          ("quantize", "--band-edge-weight"), ("quantize", "--risk-error-percentile")])
def test_a_number_option_refuses_nan_before_any_work(tmp_path, verb, option):
    # click's FloatRange lets nan through its bounds (IEEE 754: every comparison with nan is false)
    from click.testing import CliRunner
    from scorecard.cli import main
    source = tmp_path / "never-read.csv"
    result = CliRunner().invoke(main, [verb, str(source), "-o", str(tmp_path / "out.json"), option, "nan"]
                                + (["--outcome", "y"] if verb == "fit" else []))
    assert result.exit_code == 2
    assert result.output.strip().splitlines() == [result.output.strip()] and "not a finite number" in result.output
    assert not (tmp_path / "out.json").exists()


def test_fit_refuses_a_measurement_beyond_the_document_limit_before_fitting(files):
    # one age of 1e308 fitted for the whole run, then the model document refused its training range on writing
    frame = pd.read_csv(files / "cohort.csv")
    frame["age"] = frame["age"].astype(float)
    frame.loc[3, "age"] = 1e308
    frame.to_csv(files / "huge.csv", index=False)
    line = one_line_error(run("fit", files / "huge.csv", "--outcome", "delirium", "-o", files / "out.model.json"),
                          "row 4, column 'age': 1e+308 is beyond ±1e+09 for a measurement")
    assert "huge.csv" in line and "fitting" not in line and not list(files.glob("out*"))


def test_a_cell_of_400_digits_is_quoted_short(files):
    frame = pd.read_csv(files / "cohort.csv").astype({"age": object})
    frame.loc[0, "age"] = "9" * 400
    frame.to_csv(files / "digits.csv", index=False)
    line = one_line_error(run("score", files / "sheet.json", files / "digits.csv", "-o", files / "out.csv"),
                          "(402 characters) is not a number")
    assert len(line) < 300 and not list(files.glob("out*"))
