"""Refusing to compare a sheet with a model it was not built from."""

from __future__ import annotations

from scorecard.errors import UserError
from scorecard.model import AdditiveModel

OVERRIDE_OPTION = "--allow-other-model"


def model_matches_sheet(model: AdditiveModel, sheet: dict, model_path: str, allow_other: bool, warn) -> bool:
    """True when the model's fingerprint is the sheet's `model.fingerprint`.

    A different model is refused (one line, exit 2) unless `allow_other`, in which case `warn` gets a loud
    warning and the caller marks the comparison as made against another model."""
    expected = sheet["model"]["fingerprint"]
    found = model.fingerprint
    if found == expected:
        return True
    if not allow_other:
        raise UserError(
            f"{model_path}: model fingerprint {found[:12]} is not the one the sheet was built from ({expected[:12]}); "
            f"give the sheet's own model, or pass {OVERRIDE_OPTION} to compare anyway"
        )
    warn(
        f"WARNING: {model_path} (fingerprint {found[:12]}) is NOT the model this sheet was built from "
        f"({expected[:12]}); comparing anyway because {OVERRIDE_OPTION} was given - the result cannot sign this sheet off"
    )
    return False
