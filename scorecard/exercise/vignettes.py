"""Drawing the vignettes of a hand-scoring exercise from a sheet document.

For every measured item the sheet needs, a list of *targets* is made: one value inside each printed row (and
each row of a pair axis), then the cases a nurse gets wrong: each printed cut itself and the last printed value
below it (boundaries), a value written with one more decimal than printed, next to a cut (half up: 79.5 -> 80;
completed units: 79.6 -> 79),
"not measured" where the sheet has a row for it, a value outside the training range, and a level no row lists
where the sheet has an "Other" row. Targets are dealt to the vignettes in a seeded random order, one per item
per vignette, so together the vignettes use every printed row at least once; the remaining places get ordinary
values. Everything is a pure function of the sheet and the seed.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from scorecard.audit.paper import sheet_features
from scorecard.errors import UserError
from scorecard.sheet.printed import COMPLETED, number_text, reading_of, units

UNLISTED_LEVEL = "something else"  # a level no row lists: scored on the sheet's "Other" row


@dataclass(frozen=True)
class Target:
    text: str  # the value as written on the patient card and in key.csv ("" = not measured)
    case: str  # "row", "boundary", "more decimals", "not measured", "out of range", "unlisted level", "ordinary"


def _blocks(sheet: dict) -> dict[str, list[dict]]:
    """Per feature, every block that reads it: single terms and pair axes (each with rows, kind, decimals...)."""
    out: dict[str, list[dict]] = {name: [] for name in sheet_features(sheet)}
    for term in sheet["terms"]:
        for block in term["axes"] if term["kind"] == "pair" else [term]:
            out[block["feature"]].append(block)
    return out


def _continuous_targets(blocks: list[dict], rng: np.random.Generator) -> list[Target]:
    main = blocks[0]
    d = int(main["decimals"])
    rng_lo, rng_hi = units(main["training_range"]["min"], d), units(main["training_range"]["max"], d)
    targets = []
    for block in blocks:
        bd = int(block["decimals"])
        for r in block["rows"]:
            if r.get("missing"):
                continue
            lo = rng_lo if r["lower"] is None else units(r["lower"], d)
            hi = rng_hi if r["upper"] is None else units(r["upper"], d) - 1
            lo, hi = (max(lo, rng_lo), min(hi, rng_hi)) if max(lo, rng_lo) <= min(hi, rng_hi) else (lo, max(lo, hi))
            targets.append(Target(number_text(int(rng.integers(lo, hi + 1)), d), "row"))
        for r in block["rows"]:
            if r.get("missing") or r["lower"] is None:
                continue
            cut = units(r["lower"], bd)
            targets.append(Target(number_text(cut, bd), "boundary"))
            targets.append(Target(number_text(cut - 1, bd), "boundary"))
    cuts = [units(r["lower"], int(main["decimals"])) for r in main["rows"] if not r.get("missing") and r["lower"] is not None]
    if cuts:
        # one more decimal than printed, just below a cut: read half up, x.5 goes up into the upper row (79.5
        # counts as 80); read in completed units, x.6 stays in the lower row (79.6 years counts as 79)
        cut = cuts[int(rng.integers(0, len(cuts)))]
        tenths = 4 if reading_of(main) == COMPLETED else 5
        targets.append(Target(number_text(cut * 10 - tenths, d + 1), "more decimals"))
    span = max(rng_hi - rng_lo, 10)
    outside = rng_hi + max(1, span // 10) if rng.random() < 0.5 else rng_lo - max(1, span // 10)
    targets.append(Target(number_text(outside, d), "out of range"))
    if any(r.get("missing") for b in blocks for r in b["rows"]):
        targets.append(Target("", "not measured"))
    return targets


def _category_targets(blocks: list[dict], rng: np.random.Generator) -> list[Target]:
    targets = []
    for block in blocks:
        for r in block["rows"]:
            if r.get("levels"):
                targets.append(Target(r["levels"][int(rng.integers(0, len(r["levels"])))], "row"))
        if any(r.get("other") for r in block["rows"]):
            targets.append(Target(UNLISTED_LEVEL, "unlisted level"))
        if any(r.get("missing") for r in block["rows"]):
            targets.append(Target("", "not measured"))
    return targets


def _flag_targets(blocks: list[dict]) -> list[Target]:
    targets = [Target("no", "row"), Target("yes", "row")]
    if any(r.get("missing") for b in blocks for r in b["rows"]):
        targets.append(Target("", "not measured"))
    return targets


def _ordinary(blocks: list[dict], rng: np.random.Generator) -> Target:
    """A plausible value for a place no target needs: inside the training range, or a listed level."""
    block = blocks[0]
    kind = block["kind"]
    if kind == "continuous":
        d = int(block["decimals"])
        lo, hi = units(block["training_range"]["min"], d), units(block["training_range"]["max"], d)
        return Target(number_text(int(rng.integers(lo, hi + 1)), d), "ordinary")
    if kind == "flag":
        return Target("yes" if rng.random() < 0.3 else "no", "ordinary")
    levels = [lv for r in block["rows"] for lv in r.get("levels", [])]
    return Target(levels[int(rng.integers(0, len(levels)))], "ordinary")


def draw_vignettes(sheet: dict, count: int, seed: int) -> tuple[list[str], list[dict[str, Target]]]:
    """(feature names in print order, one {feature: Target} per vignette). Refuses a count too small to use
    every printed row and every special case at least once, naming the count needed."""
    rng = np.random.default_rng(seed)
    blocks = _blocks(sheet)
    targets: dict[str, list[Target]] = {}
    for name, bl in blocks.items():
        kind = bl[0]["kind"]
        found = _continuous_targets(bl, rng) if kind == "continuous" else (_flag_targets(bl) if kind == "flag" else _category_targets(bl, rng))
        unique = list(dict.fromkeys(found))  # the same value twice (a one-value row at a boundary) is dealt once
        order = rng.permutation(len(unique))
        targets[name] = [unique[i] for i in order]
    needed = max(len(t) for t in targets.values())
    if count < needed:
        raise UserError(f"-n {count}: this sheet needs at least {needed} vignettes so that every printed row and every special "
                        f"case (boundaries, extra decimals, not measured, out of range) is used; give -n {needed} or more")
    vignettes: list[dict[str, Target]] = [{} for _ in range(count)]
    for name, ts in targets.items():
        slots = rng.permutation(count)
        for k, slot in enumerate(slots):
            vignettes[slot][name] = ts[k] if k < len(ts) else _ordinary(blocks[name], rng)
    return list(blocks), vignettes
