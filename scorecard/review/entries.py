"""Names people read for each score of a term: a bin's range, a knot's value, a level, yes/no."""

from __future__ import annotations

from scorecard.model.document import AdditiveModel, Feature, Term


def number(value: float, feature: Feature) -> str:
    """At the feature's display decimals, or more when a bin edge falls between displayed values (e.g. 60.5)."""
    for places in range(feature.decimals, feature.decimals + 4):
        if abs(round(value, places) - value) < 1e-9:
            return f"{value:.{places}f}"
    return f"{value:.{feature.decimals + 3}f}"


def entry_labels(model: AdditiveModel, term: Term) -> list[str]:
    """One label per entry of `term.scores` (one-feature terms)."""
    if term.kind == "flag":
        return ["no", "yes"]
    if term.kind == "categorical":
        return list(term.levels)
    feature = model.feature(term.feature)
    edges = term.edges or []
    if term.shape == "linear":
        return [number(e, feature) for e in edges]  # knots: the value itself
    return _bin_labels(edges, feature, "all values", "< {}", "{} to < {}", ">= {}")


def axis_labels(model: AdditiveModel, term: Term, which: int) -> list[str]:
    """Labels along one axis of a pair grid."""
    name = term.features[which]
    axis = term.axes[which]
    feature = model.feature(name)
    if "levels" in axis:
        return list(axis["levels"])
    return _bin_labels(axis["edges"], feature, "all", "<{}", "{}-{}", ">={}")


def _bin_labels(edges, feature, alone: str, below: str, between: str, above: str) -> list[str]:
    """One label per step bin (edges[i-1] <= x < edges[i]), in the given wording; `alone` when there is one bin."""
    if not edges:
        return [alone]
    shown = [number(e, feature) for e in edges]
    return [below.format(shown[0])] + [between.format(a, b) for a, b in zip(shown[:-1], shown[1:])] + [above.format(shown[-1])]
