"""Save -> load keeps the model exactly: same fingerprint, same bytes, same predictions."""

import json
import string
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from scorecard.jsondoc import canonical_bytes, canonical_float, fingerprint
from scorecard.model import load_model, model_from_dict, predict_logodds, save_model


def test_save_load_gives_identical_fingerprint_and_bytes(model_doc, tmp_path):
    model = model_from_dict(model_doc)
    first = save_model(model, tmp_path / "a.model.json")
    again = load_model(tmp_path / "a.model.json")
    second = save_model(again, tmp_path / "b.model.json")
    assert first == second == again.fingerprint == model.fingerprint
    assert (tmp_path / "a.model.json").read_bytes() == (tmp_path / "b.model.json").read_bytes()
    # the fingerprint is SHA-256 of the canonical JSON (sorted keys, no spaces): FIPS 180-4 digest, 64 hex digits
    assert len(first) == 64 and set(first) <= set("0123456789abcdef")


def test_fingerprint_ignores_key_order_and_whitespace_but_not_values(model_doc, tmp_path):
    path = tmp_path / "m.model.json"
    shuffled = {k: model_doc[k] for k in reversed(list(model_doc))}
    path.write_text(json.dumps(shuffled, indent=7))
    assert load_model(path).fingerprint == model_from_dict(model_doc).fingerprint
    model_doc["terms"][0]["scores"][0] = -0.41
    assert model_from_dict(model_doc).fingerprint != load_model(path).fingerprint


def test_integer_written_numbers_and_negative_zero_fingerprint_like_floats(model_doc):
    # 60 and 60.0 are the same JSON number to a reader; -0.0 is written as 0.0 (jsondoc's canonical form)
    a = model_from_dict(model_doc)
    model_doc["features"][0]["training_range"] = {"min": 60.0, "max": 100.0}
    model_doc["terms"][0]["scores"][1] = -0.0
    b = model_from_dict(model_doc)
    assert a.fingerprint == b.fingerprint


def test_save_refuses_to_overwrite_an_input(model_doc, tmp_path):
    import pytest

    from scorecard.errors import UserError

    path = tmp_path / "m.model.json"
    save_model(model_from_dict(model_doc), path)
    before = path.read_bytes()
    with pytest.raises(UserError, match="also an input"):
        save_model(model_from_dict(model_doc), path, protect=(path,))
    assert path.read_bytes() == before


# -- property test over random valid models ----------------------------------------------------------

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)
# scores and the intercept are log-odds, which a model document bounds at +-100 (model/document.py MAX_LOGODDS)
logodds = st.floats(min_value=-100, max_value=100, allow_nan=False, allow_infinity=False)
names = st.text(alphabet=string.ascii_lowercase, min_size=1, max_size=6)
levels = st.lists(st.text(alphabet=string.ascii_letters + " -", min_size=1, max_size=8).filter(lambda s: s.strip() == s),
                  min_size=2, max_size=5, unique=True)


def sorted_edges(n_min=0, n_max=6):
    # distinct in the document's canonical numbers (11 significant digits), as a document's edges must be
    return st.lists(finite.map(canonical_float), min_size=n_min, max_size=n_max, unique=True).map(sorted)


@st.composite
def random_model(draw):
    features, terms = [], []
    n = draw(st.integers(1, 5))
    feature_names = draw(st.lists(names, min_size=n, max_size=n, unique=True))
    for name in feature_names:
        kind = draw(st.sampled_from(["step", "linear", "categorical", "flag"]))
        missing = draw(st.sampled_from(["score", "average", "error"]))
        missing_score = draw(st.one_of(st.none(), logodds))
        if kind in ("step", "linear"):
            edges = draw(sorted_edges(2 if kind == "linear" else 0))
            n_scores = len(edges) + (1 if kind == "step" else 0)
            feature = {"name": name, "label": name.upper(), "kind": "continuous", "missing": missing,
                       "decimals": draw(st.integers(0, 6))}
            if edges and draw(st.booleans()):
                feature["training_range"] = {"min": edges[0], "max": edges[-1]}
            term = {"kind": "continuous", "name": name, "feature": name, "shape": kind, "edges": edges,
                    "scores": draw(st.lists(logodds, min_size=n_scores, max_size=n_scores)),
                    "missing_score": missing_score}
            if draw(st.booleans()):
                term["counts"] = draw(st.lists(st.integers(0, 1000), min_size=n_scores, max_size=n_scores))
        elif kind == "categorical":
            lv = draw(levels)
            feature = {"name": name, "label": name, "kind": "categorical", "levels": lv, "missing": missing}
            term = {"kind": "categorical", "name": name, "feature": name, "levels": lv,
                    "scores": draw(st.lists(logodds, min_size=len(lv), max_size=len(lv))),
                    "unseen": draw(st.sampled_from(["error", "average", "missing"])), "missing_score": missing_score}
        else:
            feature = {"name": name, "label": name, "kind": "flag", "missing": missing}
            term = {"kind": "flag", "name": name, "feature": name, "scores": draw(st.lists(logodds, min_size=2, max_size=2)),
                    "missing_score": missing_score}
        features.append(feature)
        terms.append(term)
    if len(features) >= 2 and draw(st.booleans()):
        a, b = features[0], features[1]
        axes, shape = [], []
        for f in (a, b):
            if f["kind"] == "continuous":
                e = draw(sorted_edges(0, 3))
                axes.append({"edges": e})
                shape.append(len(e) + 1)
            elif f["kind"] == "flag":
                axes.append({"levels": ["no", "yes"]})
                shape.append(2)
            else:
                axes.append({"levels": list(f["levels"])})
                shape.append(len(f["levels"]))
        grid = draw(st.lists(st.lists(logodds, min_size=shape[1], max_size=shape[1]), min_size=shape[0], max_size=shape[0]))
        terms.append({"kind": "pair", "name": f"{a['name']} x {b['name']}", "features": [a["name"], b["name"]],
                      "axes": axes, "scores": grid})
    return {
        "format_version": 1, "document": "scorecard-model", "name": draw(names), "version": "1",
        "outcome": {"event": "e", "horizon": "h", "population": "p"}, "link": "logit",
        "intercept": draw(logodds), "features": features, "terms": terms,
        "provenance": {"note": draw(st.text(max_size=10)), "value": draw(finite)},
    }


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(random_model())
def test_round_trip_of_random_valid_models(doc):
    model = model_from_dict(doc)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "r.model.json"
        written = save_model(model, path)
        loaded = load_model(path)
        assert loaded.fingerprint == written == model.fingerprint
        assert canonical_bytes(loaded.to_dict()) == canonical_bytes(model.to_dict())
        assert fingerprint(json.loads(path.read_text())) == written
    # every number survives as its canonical form (11 significant digits, jsondoc), within 5e-11 of itself
    assert loaded.intercept == canonical_float(doc["intercept"])
    assert abs(loaded.intercept - doc["intercept"]) <= max(5.1e-11 * abs(doc["intercept"]), 1e-12)
    for t_in, t_out in zip(doc["terms"], loaded.terms):
        assert np.array_equal(np.asarray(t_out.scores), np.vectorize(canonical_float, otypes=[float])(t_in["scores"]))
    # and the reloaded model predicts exactly as the original on a measured patient
    row = {}
    for f in loaded.features:
        if f.kind == "continuous":
            row[f.name] = [0.5]
        elif f.kind == "flag":
            row[f.name] = ["yes"]
        else:
            row[f.name] = [f.levels[0]]
    frame = pd.DataFrame(row)
    a, _ = predict_logodds(model.copy(), frame)
    b, _ = predict_logodds(loaded, frame)
    assert np.array_equal(a, b)
