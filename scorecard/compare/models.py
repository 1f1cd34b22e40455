"""Two model documents compared: terms added or removed, how far each shape moved (in log-odds, evaluated by
the model's own prediction code on probe values), the intercept, features, and the edits made since.

Shapes are probed at every bin edge and knot of either version, the midpoints between them and the training
range's ends (each level of a category, both answers of a flag, and not measured), so a step or a knot that
moved is always seen.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from scorecard.model import AdditiveModel, contributions
from scorecard.model.document import Term
from scorecard.sheet.printed import term_label

PROBES_PER_AXIS = 200


def _probe_values(feature_name: str, models: list[AdditiveModel]) -> list:
    """Values of one feature at which both versions' shapes are compared."""
    kinds = {m.feature(feature_name).kind for m in models if feature_name in m.used_features}
    kind = kinds.pop() if len(kinds) == 1 else None
    if kind == "flag":
        return [0.0, 1.0, None]
    if kind == "categorical":
        # levels both versions know: a level one of them has never seen is reported as a feature change
        known = [m.feature(feature_name).levels or [] for m in models if feature_name in m.used_features]
        return [lv for lv in known[0] if all(lv in k for k in known[1:])] + [None]
    points: set[float] = set()
    for m in models:
        if feature_name not in m.used_features:
            continue
        f = m.feature(feature_name)
        if f.training_range:
            points |= {float(f.training_range["min"]), float(f.training_range["max"])}
        for t in m.terms:
            if t.kind == "continuous" and t.feature == feature_name:
                points |= set(map(float, t.edges))
            if t.kind == "pair" and feature_name in t.features:
                axis = t.axes[t.features.index(feature_name)]
                points |= set(map(float, axis.get("edges", [])))
    grid = sorted(points)
    mids = [(a + b) / 2 for a, b in zip(grid[:-1], grid[1:])]
    values = sorted(set(grid) | set(mids))
    if len(values) > PROBES_PER_AXIS:
        values = list(np.quantile(values, np.linspace(0, 1, PROBES_PER_AXIS)))
    return [*values, None]


def _filler(model: AdditiveModel, name: str):
    """A harmless value for a feature a probe does not vary (its term is not read)."""
    f = model.feature(name)
    if f.kind == "continuous":
        return (f.training_range or {}).get("min", 0.0)
    if f.kind == "flag":
        return 0.0
    return (f.levels or [""])[0]


def _term_values(model: AdditiveModel, term: Term, probes: dict[str, list]) -> np.ndarray:
    """The term's contribution at every probe (a grid for a pair), by the model's own prediction code."""
    names = term.feature_names
    grids = np.meshgrid(*[np.arange(len(probes[n])) for n in names], indexing="ij")
    cols = {}
    for n, g in zip(names, grids):
        cols[n] = [("" if probes[n][k] is None else (repr(float(probes[n][k])) if isinstance(probes[n][k], (float, np.floating)) else probes[n][k]))
                   for k in g.reshape(-1)]
    size = len(next(iter(cols.values())))
    frame = pd.DataFrame({n: cols.get(n, [str(_filler(model, n))] * size) for n in model.used_features}, dtype=str)
    single = AdditiveModel(name=model.name, version=model.version, outcome=model.outcome, intercept=0.0,
                           features=model.features, terms=[term], link=model.link)
    parts, _ = contributions(single, frame)
    return parts[term.name].to_numpy()


def _allows_missing(model: AdditiveModel, names: list[str]) -> bool:
    return all(model.feature(n).missing != "error" for n in names)


def model_changes(old: AdditiveModel, new: AdditiveModel) -> dict:
    """The whole comparison of two model documents as a plain dict (also the --json output)."""
    old_names = [t.name for t in old.terms]
    new_names = [t.name for t in new.terms]
    terms = []
    for name in new_names + [n for n in old_names if n not in new_names]:
        if name not in old_names:
            terms.append({"name": name, "label": term_label(new, name), "status": "added", "changes": ["new term"]})
            continue
        if name not in new_names:
            terms.append({"name": name, "label": term_label(old, name), "status": "removed", "changes": ["term removed"]})
            continue
        a, b = old.term(name), new.term(name)
        changes = []
        if a.kind != b.kind or a.feature_names != b.feature_names:
            terms.append({"name": name, "label": term_label(new, name), "status": "changed",
                          "changes": [f"kind or features changed ({a.kind} -> {b.kind})"]})
            continue
        if a.kind == "continuous" and a.shape != b.shape:
            changes.append(f"shape {a.shape} -> {b.shape}")
        probes = {n: _probe_values(n, [old, new]) for n in a.feature_names}
        if not all(_allows_missing(m, a.feature_names) for m in (old, new)):
            probes = {n: [v for v in vals if v is not None] for n, vals in probes.items()}
        va, vb = _term_values(old, a, probes), _term_values(new, b, probes)
        diff = vb - va
        largest = float(np.max(np.abs(diff))) if diff.size else 0.0
        centred = float(np.max(np.abs(diff - np.mean(diff)))) if diff.size else 0.0
        if largest > 1e-12:
            changes.append(f"shape moved by up to {largest:.3f} log-odds ({centred:.3f} after a constant shift)")
        terms.append({"name": name, "label": term_label(new, name), "status": "changed" if changes else "unchanged", "changes": changes,
                      "largest_shift": largest, "largest_shift_after_constant": centred})
    edits_old = [e.get("what", "") for e in old.provenance.get("edits", [])]
    edits_new = [e.get("what", "") for e in new.provenance.get("edits", [])]
    other = []
    if old.intercept != new.intercept:
        other.append(f"intercept {old.intercept:.4f} -> {new.intercept:.4f}")
    for key, what in (("name", "name"), ("version", "version"), ("outcome", "outcome")):
        if getattr(old, key) != getattr(new, key):
            other.append(f"{what} changed: {getattr(old, key)!r} -> {getattr(new, key)!r}")
    old_f = {f.name: f for f in old.features}
    for f in new.features:
        g = old_f.get(f.name)
        if g is not None and g.kind == "categorical" and g.levels != f.levels:
            other.append(f"feature {f.name!r}: levels {g.levels} -> {f.levels}")
        for key in ("role", "direction", "missing", "unit", "decimals", "label"):
            if g is not None and getattr(g, key) != getattr(f, key):
                other.append(f"feature {f.name!r}: {key} {getattr(g, key)!r} -> {getattr(f, key)!r}")
    counts = {s: sum(1 for t in terms if t["status"] == s) for s in ("added", "removed", "changed", "unchanged")}
    return {"document": "scorecard-compare-report", "format_version": 1, "compares": "models",
            "old": {"name": old.name, "version": old.version, "fingerprint": old.fingerprint},
            "new": {"name": new.name, "version": new.version, "fingerprint": new.fingerprint},
            "identical": old.fingerprint == new.fingerprint, "summary": counts, "terms": terms, "other_changes": other,
            "edits": {"added": [e for e in edits_new if e not in edits_old], "removed": [e for e in edits_old if e not in edits_new]}}
