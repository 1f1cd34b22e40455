"""Malformed model documents: each is refused with one UserError line that names the field at fault."""

import json

import pytest

from scorecard.errors import UserError
from scorecard.model import load_model


def _set(path, value):
    def mutate(doc):
        *parents, last = path
        target = doc
        for p in parents:
            target = target[p]
        target[last] = value
    return mutate


def _delete(path):
    def mutate(doc):
        *parents, last = path
        target = doc
        for p in parents:
            target = target[p]
        del target[last]
    return mutate


# (id, mutation of the valid document, text that must appear in the message: the field path)
CASES = [
    ("wrong version", _set(["format_version"], 2), "format_version"),
    ("wrong document tag", _set(["document"], "scorecard-sheet"), "document"),
    ("missing intercept", _delete(["intercept"]), "'intercept'"),
    ("intercept is text", _set(["intercept"], "-1.5"), "intercept"),
    ("infinite intercept", _set(["intercept"], float("inf")), "intercept"),
    ("link not logit", _set(["link"], "probit"), "link"),
    ("outcome without population", _delete(["outcome", "population"]), "'population'"),
    ("unknown top-level field", _set(["colour"], "red"), "'colour'"),
    ("no features", _set(["features"], []), "features"),
    ("feature name with a space", _set(["features", 0, "name"], "age years"), "features[0].name"),
    ("feature declared twice", _set(["features", 1, "name"], "age"), "features[1].name"),
    ("decimals out of range", _set(["features", 0, "decimals"], 9), "features[0].decimals"),
    ("unknown missing policy", _set(["features", 1, "missing"], "impute"), "features[1].missing"),
    ("categorical feature without levels", _delete(["features", 2, "levels"]), "features[2].levels"),
    ("training range min above max", _set(["features", 0, "training_range"], {"min": 100, "max": 60}), "features[0].training_range"),
    ("unsorted edges", _set(["terms", 0, "edges"], [80, 70]), "terms[0].edges[1]"),
    ("duplicate edges", _set(["terms", 0, "edges"], [70, 70]), "terms[0].edges[1]"),
    ("score count != bin count", _set(["terms", 0, "scores"], [-0.4, 0.0]), "terms[0].scores"),
    ("NaN score", _set(["terms", 0, "scores"], [-0.4, float("nan"), 0.6]), "terms[0].scores[1]"),
    ("infinite spread", _set(["terms", 0, "spread"], [0.1, float("-inf"), 0.1]), "terms[0].spread[1]"),
    ("counts length != bins", _set(["terms", 0, "counts"], [30, 40]), "terms[0].counts"),
    ("negative count", _set(["terms", 0, "counts"], [30, -1, 30]), "terms[0].counts[1]"),
    ("linear shape with one knot", _set(["terms", 1, "edges"], [140]), "terms[1]"),
    ("unknown shape", _set(["terms", 1, "shape"], "spline"), "terms[1].shape"),
    ("NaN not-measured score", _set(["terms", 1, "missing_score"], float("nan")), "terms[1].missing_score"),
    ("unknown term kind", _set(["terms", 2, "kind"], "ordinal"), "terms[2].kind"),
    ("categorical level not declared", _set(["terms", 2, "levels"], ["own_home", "with_family", "hotel"]), "terms[2].levels"),
    ("categorical scores != levels", _set(["terms", 2, "scores"], [0.0, 0.2]), "terms[2].scores"),
    ("unknown unseen policy", _set(["terms", 2, "unseen"], "guess"), "terms[2].unseen"),
    ("flag with three scores", _set(["terms", 3, "scores"], [0.0, 1.1, 2.0]), "terms[3].scores"),
    ("term kind differs from feature kind", _set(["terms", 4, "kind"], "flag"), "terms[4]"),
    ("feature used but not declared", _set(["terms", 4, "feature"], "albumin"), "terms[4].feature"),
    ("term name used twice", _set(["terms", 4, "name"], "age"), "terms[4].name"),
    ("pair grid of wrong shape", _set(["terms", 5, "scores"], [[0.0, 0.0, 0.1], [0.3, -0.1, 0.0]]), "terms[5].scores"),
    ("pair grid cell is NaN", _set(["terms", 5, "scores"], [[0.0, 0.0], [float("nan"), -0.1]]), "terms[5].scores[1][0]"),
    ("pair of one feature twice", _set(["terms", 5, "features"], ["age", "age"]), "terms[5].features"),
    ("pair axis without edges", _set(["terms", 5, "axes"], [{"levels": ["a"]}, {"edges": [5]}]), "terms[5].axes[0]"),
    ("pair axis level listed twice", lambda d: d["terms"].append(
        {"kind": "pair", "name": "res x flag", "features": ["residence", "prior_delirium"],
         "axes": [{"levels": ["own_home", "own_home"]}, {"levels": ["no", "yes"]}], "scores": [[0, 0], [0, 0]]}),
     "terms[6].axes[0].levels"),
    ("pair feature not declared", _set(["terms", 5, "features"], ["age", "albumin"]), "terms[5].features[1]"),
    ("term without scores", _delete(["terms", 3, "scores"]), "'scores'"),
    ("provenance value is infinite", _set(["provenance", "largest_difference"], float("inf")), "provenance.largest_difference"),
]


def _write(tmp_path, doc):
    path = tmp_path / "bad.model.json"
    # allow_nan writes NaN / Infinity tokens as a careless exporter would
    path.write_text(json.dumps(doc, allow_nan=True))
    return path


@pytest.mark.parametrize("mutate, field", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_malformed_document_is_refused_naming_the_field(model_doc, tmp_path, mutate, field):
    mutate(model_doc)
    path = _write(tmp_path, model_doc)
    with pytest.raises(UserError) as info:
        load_model(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(str(path))
    assert field in message, message


def test_there_are_at_least_twenty_distinct_cases():
    assert len({c[0] for c in CASES}) >= 20


@pytest.mark.parametrize(
    "content, expected",
    [
        (b"", "file is empty"),
        (b"   \n", "file is empty"),
        (b"{\"format_version\": 1,", "not valid JSON at line 1"),
        (b"format_version = 1", "not valid JSON"),
        (b"[1, 2, 3]", "expected a JSON object"),
        (b"\xff\xfe{}", "not UTF-8"),
    ],
    ids=["empty", "blank", "truncated", "not json", "a list", "not utf-8"],
)
def test_unreadable_files_are_refused_in_one_line(tmp_path, content, expected):
    path = tmp_path / "bad.model.json"
    path.write_bytes(content)
    with pytest.raises(UserError) as info:
        load_model(path)
    assert expected in str(info.value) and "\n" not in str(info.value)
    assert str(path) in str(info.value)


def test_number_too_large_for_a_float_is_named(model_doc, tmp_path):
    # Python's json reads 1e999 as inf; the field must still be named
    text = json.dumps(model_doc).replace('"intercept": -1.5', '"intercept": 1e999')
    path = tmp_path / "big.model.json"
    path.write_text(text)
    with pytest.raises(UserError, match=r"intercept: must be a finite number"):
        load_model(path)


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(UserError, match="no such file"):
        load_model(tmp_path / "nothing.model.json")
    with pytest.raises(UserError, match="is a folder"):
        load_model(tmp_path)
