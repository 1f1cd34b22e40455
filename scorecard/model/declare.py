"""What a methodologist declares about the features when a model is made, beyond what the data shows: the
clinical order of a categorical feature's levels (printed in that order) and a feature recorded in completed
units. Both change no score: a level keeps its score, a completed-units feature keeps its shape.
"""

from __future__ import annotations

from scorecard.errors import UserError
from scorecard.model.document import AdditiveModel
from scorecard.suggest import did_you_mean


def declare_level_order(model: AdditiveModel, name: str, order: list[str], option: str = "--order") -> None:
    """Put feature `name`'s levels in `order` (every level once) everywhere the model lists them, moving each
    level's scores, counts and spread with it."""
    feature = _feature(model, name, option)
    if feature.kind != "categorical":
        raise UserError(f"{option} {name}=...: {name!r} is {feature.kind}, only a categorical feature has levels to order")
    known = list(feature.levels or [])
    for level in order:
        if level not in known:
            raise UserError(f"{option} {name}=...: {level!r} is not a level of {name!r}{did_you_mean(level, known)}; "
                            f"levels: {', '.join(known)}")
    if len(set(order)) != len(order):
        raise UserError(f"{option} {name}=...: a level is listed twice; list each of {', '.join(known)} once")
    left = [lv for lv in known if lv not in order]
    if left:
        raise UserError(f"{option} {name}=...: {', '.join(repr(lv) for lv in left)} missing; list every level of "
                        f"{name!r} in the order to print: {', '.join(known)}")
    feature.levels = list(order)
    for term in model.terms:
        if term.kind == "categorical" and term.feature == name:
            here = [lv for lv in order if lv in term.levels]
            at = [term.levels.index(lv) for lv in here]
            for key in ("scores", "counts", "spread"):
                values = getattr(term, key)
                if values is not None:
                    setattr(term, key, [values[i] for i in at])
            term.levels = here
        elif term.kind == "pair" and name in term.features:
            j = term.features.index(name)
            axis = term.axes[j]
            here = [lv for lv in order if lv in axis["levels"]]
            at = [axis["levels"].index(lv) for lv in here]
            term.axes[j] = {**axis, "levels": here}
            for key in ("scores", "counts", "spread"):
                grid = getattr(term, key)
                if grid is None:
                    continue
                setattr(term, key, [grid[i] for i in at] if j == 0 else [[row[i] for i in at] for row in grid])


def declare_completed(model: AdditiveModel, name: str, option: str = "--completed") -> None:
    """Feature `name` is recorded in completed units (age in completed years: 79.6 counts as 79)."""
    feature = _feature(model, name, option)
    if feature.kind != "continuous":
        raise UserError(f"{option} {name}: {name!r} is {feature.kind}; only a measured (continuous) feature is "
                        "recorded in completed units")
    feature.reading = "completed"


def _feature(model: AdditiveModel, name: str, option: str):
    known = [f.name for f in model.features]
    if name not in known:
        raise UserError(f"{option} {name}: {name!r} is not a feature of the model{did_you_mean(name, known)}; "
                        f"features: {', '.join(known)}")
    return model.feature(name)
