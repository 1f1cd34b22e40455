"""The additive model document (`*.model.json`): in-memory form, validation, load and save.

Loading is all-or-nothing: the JSON Schema shipped in this package checks types and names, then
`_check_structure` checks what a schema cannot (sorted edges, lengths that agree, features declared before a
term uses them). Every failure is one `UserError` line naming the file and the field path.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import jsonschema

from scorecard.errors import UserError
from scorecard.jsondoc import first_unprintable, field_path, schema_error_line, schema_validator, atomic_write_text, fingerprint, normalise, pretty_text, read_json_file
from scorecard.suggest import did_you_mean

FORMAT_VERSION = 1
DOCUMENT_TAG = "scorecard-model"
FLAG_LEVELS = ("no", "yes")


@dataclass
class Feature:
    name: str
    label: str
    kind: str  # continuous | categorical | flag
    unit: str = ""
    decimals: int = 0
    levels: list[str] | None = None
    training_range: dict[str, float] | None = None
    missing: str = "score"  # score | average | error
    direction: str | None = None
    role: str | None = None
    reading: str | None = None  # None or "rounded": round half up; "completed": completed units (79.6 years -> 79)


@dataclass
class Term:
    """One additive term. Single-feature terms use `feature`; pair terms use `features` and `axes`."""

    kind: str  # continuous | categorical | flag | pair
    name: str
    scores: list  # list[float], or list[list[float]] for pairs
    feature: str | None = None
    shape: str | None = None  # continuous: step | linear
    edges: list[float] | None = None
    levels: list[str] | None = None
    spread: list | None = None
    counts: list | None = None
    missing_score: float | None = None
    missing_count: float | None = None
    unseen: str | None = None  # categorical: error | average | missing
    features: list[str] | None = None  # pair
    axes: list[dict] | None = None  # pair

    @property
    def feature_names(self) -> list[str]:
        return list(self.features) if self.kind == "pair" else [self.feature]


@dataclass
class AdditiveModel:
    name: str
    version: str
    outcome: dict[str, str]
    intercept: float
    features: list[Feature]
    terms: list[Term]
    provenance: dict[str, Any] = field(default_factory=dict)
    link: str = "logit"
    invented_data: bool = False  # fitted on invented data: every page made from it says so (scorecard.invented)

    # -- lookups -----------------------------------------------------------------------------------
    def feature(self, name: str) -> Feature:
        for f in self.features:
            if f.name == name:
                return f
        raise KeyError(name)

    def term(self, name: str) -> Term:
        for t in self.terms:
            if t.name == name:
                return t
        known = ", ".join(t.name for t in self.terms)
        raise UserError(f"term {name!r} is not in the model{did_you_mean(name, [t.name for t in self.terms])}; known terms: {known}")

    @property
    def used_features(self) -> list[str]:
        seen: list[str] = []
        for t in self.terms:
            for n in t.feature_names:
                if n not in seen:
                    seen.append(n)
        return seen

    # -- documents ---------------------------------------------------------------------------------
    def to_dict(self) -> dict:
        doc = {
            "format_version": FORMAT_VERSION,
            "document": DOCUMENT_TAG,
            "name": self.name,
            "version": self.version,
            "outcome": dict(self.outcome),
            "link": self.link,
            "intercept": self.intercept,
            "features": [_drop_none(vars(f)) for f in self.features],
            "terms": [_drop_none(vars(t), keep=("missing_score",)) for t in self.terms],
            "provenance": copy.deepcopy(self.provenance),
        }
        if self.invented_data:  # written only when true, so a real model's document (and fingerprint) is unchanged
            doc["invented_data"] = True
        return normalise(doc)

    @property
    def fingerprint(self) -> str:
        return fingerprint(self.to_dict())

    def copy(self) -> "AdditiveModel":
        return model_from_dict(self.to_dict())


def _drop_none(d: dict, keep: tuple[str, ...] = ()) -> dict:
    return {k: v for k, v in d.items() if v is not None or k in keep}


# -- validation ------------------------------------------------------------------------------------


def _validator() -> jsonschema.protocols.Validator:
    return schema_validator("scorecard.model", "schemas/model.schema.json")


def _best_error(errors: list[jsonschema.ValidationError]) -> jsonschema.ValidationError:
    return jsonschema.exceptions.best_match(errors)


def validate_model_dict(doc: Any, source: str = "model") -> None:
    """Raise UserError (one line) for the first problem found in a model document."""
    if not isinstance(doc, dict):
        raise UserError(f"{source}: expected a JSON object (a model document), found {type(doc).__name__}")
    if doc.get("document") == "scorecard-sheet":
        # The two documents sit side by side in one folder; name the mix-up instead of listing schema fields.
        raise UserError(f"{source}: this is a sheet document, not a model; give the model it was built from "
                        f"(its fingerprint is under 'model' in the sheet)")
    if "format_version" in doc and doc["format_version"] != FORMAT_VERSION:
        raise UserError(
            f"{source}: format_version {doc['format_version']!r} is not supported (this scorecard reads {FORMAT_VERSION}); "
            "re-export the model with a matching scorecard version"
        )
    errors = list(_validator().iter_errors(doc))
    if errors:
        raise UserError(f"{source}: {schema_error_line(_best_error(errors))}")
    problem = _first_nonfinite(doc, []) or first_unprintable(doc) or _check_structure(doc)
    if problem:
        raise UserError(f"{source}: {problem}")


def _first_nonfinite(value: Any, parts: list) -> str | None:
    """Path of the first NaN or infinite number anywhere in the document (JSON reads 1e999 as inf)."""
    if isinstance(value, float) and not math.isfinite(value):
        return f"{field_path(parts)}: must be a finite number, found {value}"
    if isinstance(value, dict):
        for k in sorted(value):
            found = _first_nonfinite(value[k], parts + [k])
            if found:
                return found
    if isinstance(value, list):
        for i, v in enumerate(value):
            found = _first_nonfinite(v, parts + [i])
            if found:
                return found
    return None


# Beyond these no clinical model or measurement lies, and sums of such numbers could overflow a float:
MAX_LOGODDS = 100.0  # |log-odds| of 100 is a risk within 1e-43 of 0 or 1
MAX_MEASUREMENT = 1e9  # bin edges and training ranges, in the feature's own unit


def _finite(values, where: str, limit: float | None = None, what: str = "") -> str | None:
    for i, v in enumerate(values):
        if isinstance(v, list):
            bad = _finite(v, f"{where}[{i}]", limit, what)
            if bad:
                return bad
        elif not math.isfinite(v):
            return f"{where}[{i}]: must be a finite number"
        elif limit is not None and abs(v) > limit:
            return f"{where}[{i}]: {v:g} is beyond \u00b1{limit:g} {what}; check the units or the export"
    return None


def _levels_problem(levels, where: str) -> str | None:
    for i, level in enumerate(levels or []):
        if not level.strip():
            return f"{where}[{i}]: a level name is empty or only spaces; give every level a name"
        if level != level.strip():
            return f"{where}[{i}]: level {level!r} has spaces at its ends; remove them (cohort cells are read stripped)"
    return None


def _negative(values, where: str) -> str | None:
    """A spread is a standard deviation between bags: never below 0."""
    for i, v in enumerate(values):
        if isinstance(v, list):
            bad = _negative(v, f"{where}[{i}]")
            if bad:
                return bad
        elif v < 0:
            return f"{where}[{i}]: {v:g} is negative; a spread is a standard deviation (0 or more)"
    return None


def _increasing(values: list[float], where: str) -> str | None:
    for i in range(1, len(values)):
        if not values[i] > values[i - 1]:
            what = "duplicate" if values[i] == values[i - 1] else "out of order"
            return f"{where}[{i}]: edges must be strictly increasing ({what}: {values[i - 1]} then {values[i]})"
    return None


def _same_length(term: dict, key: str, n: int, where: str) -> str | None:
    if key in term and term[key] is not None and len(term[key]) != n:
        return f"{where}.{key}: has {len(term[key])} entries but the term has {n} bins; give one per bin"
    return None


def _check_structure(doc: dict) -> str | None:
    if not math.isfinite(doc["intercept"]):
        return "intercept: must be a finite number"
    if abs(doc["intercept"]) > MAX_LOGODDS:
        return f"intercept: {doc['intercept']:g} is beyond \u00b1{MAX_LOGODDS:g} log-odds; check the export of the model"
    features: dict[str, dict] = {}
    for i, f in enumerate(doc["features"]):
        where = f"features[{i}]"
        if f["name"] in features:
            return f"{where}.name: feature {f['name']!r} is declared twice"
        features[f["name"]] = f
        if f["kind"] == "categorical" and not f.get("levels"):
            return f"{where}.levels: a categorical feature must list its levels"
        if f["kind"] != "categorical" and "levels" in f:
            return f"{where}.levels: only categorical features have levels"
        bad = _levels_problem(f.get("levels"), f"{where}.levels")
        if bad:
            return bad
        if f.get("reading") == "completed" and f["kind"] != "continuous":
            return f"{where}.reading: only a continuous feature is read in completed units"
        rng = f.get("training_range")
        if rng:
            if f["kind"] != "continuous":
                return f"{where}.training_range: only continuous features have a training range"
            bad = _finite([rng[k] for k in ("min", "max", "p01", "p99") if k in rng], f"{where}.training_range",
                          MAX_MEASUREMENT, "for a measurement")
            if bad:
                return bad
            if rng["min"] > rng["max"]:
                return f"{where}.training_range: min {rng['min']} is above max {rng['max']}"
    names = set()
    single_features = set()
    for i, t in enumerate(doc["terms"]):
        where = f"terms[{i}]"
        if t["name"] in names:
            return f"{where}.name: term name {t['name']!r} is used twice"
        names.add(t["name"])
        problem = _check_term(t, where, features, single_features)
        if problem:
            return problem
    return None


def _check_term(t: dict, where: str, features: dict[str, dict], single_features: set) -> str | None:
    kind = t["kind"]
    used = t["features"] if kind == "pair" else [t["feature"]]
    for j, name in enumerate(used):
        field_name = f"features[{j}]" if kind == "pair" else "feature"
        if name not in features:
            return f"{where}.{field_name}: feature {name!r} is used by a term but not declared in features"
    if kind != "pair":
        fkind = features[t["feature"]]["kind"]
        if fkind != kind:
            return f"{where}.kind: term is {kind} but feature {t['feature']!r} is {fkind}"
        if t["feature"] in single_features:
            return f"{where}.feature: feature {t['feature']!r} already has a one-feature term; merge them"
        single_features.add(t["feature"])
    bad = (_finite(t["scores"], f"{where}.scores", MAX_LOGODDS, "log-odds")
           or _finite(t.get("spread") or [], f"{where}.spread", MAX_LOGODDS, "log-odds")
           or _negative(t.get("spread") or [], f"{where}.spread")
           or _levels_problem(t.get("levels"), f"{where}.levels"))
    if bad:
        return bad
    ms = t.get("missing_score")
    if ms is not None and not math.isfinite(ms):
        return f"{where}.missing_score: must be a finite number or null"
    if ms is not None and abs(ms) > MAX_LOGODDS:
        return f"{where}.missing_score: {ms:g} is beyond \u00b1{MAX_LOGODDS:g} log-odds; check the export of the model"
    if kind == "continuous":
        edges = t.get("edges", [])
        bad = _finite(edges, f"{where}.edges", MAX_MEASUREMENT, "for a measurement") or _increasing(edges, f"{where}.edges")
        if bad:
            return bad
        n = len(t["scores"])
        if t["shape"] == "step" and len(edges) != n - 1:
            return f"{where}.scores: a step shape with {len(edges)} edges has {len(edges) + 1} bins, found {n} scores"
        if t["shape"] == "linear" and (len(edges) != n or n < 2):
            return f"{where}.scores: a linear shape needs one score per knot (at least 2); found {len(edges)} knots and {n} scores"
        return _same_length(t, "spread", n, where) or _same_length(t, "counts", n, where)
    if kind == "categorical":
        levels = t["levels"]
        if len(set(levels)) != len(levels):
            return f"{where}.levels: a level is listed twice"
        declared = features[t["feature"]]["levels"]
        extra = [lv for lv in levels if lv not in declared]
        if extra:
            return f"{where}.levels: level {extra[0]!r} is not among feature {t['feature']!r} levels {declared}"
        n = len(levels)
        if len(t["scores"]) != n:
            return f"{where}.scores: {len(t['scores'])} scores for {n} levels; give one per level"
        return _same_length(t, "spread", n, where) or _same_length(t, "counts", n, where)
    if kind == "flag":
        return _same_length(t, "spread", 2, where) or _same_length(t, "counts", 2, where)
    # pair
    if t["features"][0] == t["features"][1]:
        return f"{where}.features: a pair needs two different features"
    shape = []
    for j, (name, axis) in enumerate(zip(t["features"], t["axes"])):
        fkind = features[name]["kind"]
        aw = f"{where}.axes[{j}]"
        if fkind == "continuous":
            if "edges" not in axis:
                return f"{aw}: feature {name!r} is continuous, so its axis needs edges"
            bad = (_finite(axis["edges"], f"{aw}.edges", MAX_MEASUREMENT, "for a measurement")
                   or _increasing(axis["edges"], f"{aw}.edges"))
            if bad:
                return bad
            shape.append(len(axis["edges"]) + 1)
        else:
            if "levels" not in axis:
                return f"{aw}: feature {name!r} is {fkind}, so its axis needs levels"
            if len(set(axis["levels"])) != len(axis["levels"]):
                return f"{aw}.levels: a level is listed twice"
            want = list(FLAG_LEVELS) if fkind == "flag" else None
            if want is not None and axis["levels"] != want:
                return f"{aw}.levels: a flag axis is {want}"
            if want is None:
                extra = [lv for lv in axis["levels"] if lv not in features[name]["levels"]]
                if extra:
                    return f"{aw}.levels: level {extra[0]!r} is not among feature {name!r} levels"
            shape.append(len(axis["levels"]))
    for key in ("scores", "spread", "counts"):
        grid = t.get(key)
        if grid is None:
            continue
        if len(grid) != shape[0] or any(len(row) != shape[1] for row in grid):
            found = f"{len(grid)}x{len(grid[0]) if grid else 0}"
            return f"{where}.{key}: grid must be {shape[0]}x{shape[1]} (bins of {t['features'][0]} x bins of {t['features'][1]}), found {found}"
    return None


# -- conversion ------------------------------------------------------------------------------------


def model_from_dict(doc: Any, source: str = "model") -> AdditiveModel:
    """Validate then build; never returns a half-built model."""
    validate_model_dict(doc, source)
    doc = copy.deepcopy(doc)
    features = []
    for f in doc["features"]:
        if f.get("training_range"):
            f["training_range"] = {k: float(v) for k, v in f["training_range"].items()}
        features.append(Feature(**f))
    terms = []
    for t in doc["terms"]:
        t = dict(t)
        if t["kind"] == "continuous":
            t.setdefault("edges", [])
        # numbers are floats in memory, so `60` and `60.0` in a file give the same canonical form and fingerprint
        for key in ("edges", "scores", "spread", "counts", "missing_score", "missing_count"):
            if t.get(key) is not None:
                t[key] = _floats(t[key])
        if t.get("axes"):
            t["axes"] = [{**a, "edges": _floats(a["edges"])} if "edges" in a else a for a in t["axes"]]
        terms.append(Term(**t))
    return AdditiveModel(
        name=doc["name"],
        version=doc["version"],
        outcome=doc["outcome"],
        intercept=float(doc["intercept"]),
        features=features,
        terms=terms,
        provenance=doc["provenance"],
        link=doc["link"],
        invented_data=bool(doc.get("invented_data", False)),
    )


def _floats(value):
    if isinstance(value, list):
        return [_floats(v) for v in value]
    return float(value)


def load_model(path: str | Path) -> AdditiveModel:
    doc = read_json_file(path, "model document (*.model.json)", allow_nonfinite=True)
    return model_from_dict(doc, source=str(path))


def save_model(model: AdditiveModel, path: str | Path, protect: tuple = ()) -> str:
    """Validate, then write the canonical form atomically. Returns the fingerprint."""
    doc = model.to_dict()
    validate_model_dict(doc, source=f"{path} (about to be written)")
    atomic_write_text(path, pretty_text(doc), protect=protect)
    return fingerprint(doc)
