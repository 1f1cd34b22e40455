"""The sheet document: everything printed on a bedside point sheet, as a validated plain dict.

`document` loads, validates and saves it (docs/sheet-document.md is the contract); `printed` holds the rules
that define what is printed and how a measurement finds its row, shared by quantize, render and the audit.
"""

from scorecard.cautions import cautions
from scorecard.sheet.document import (
    DOCUMENT_TAG,
    FORMAT_VERSION,
    load_sheet,
    save_sheet,
    sheet_fingerprint,
    short_fingerprint,
    validate_sheet_dict,
)
from scorecard.sheet.printed import (
    MEASURE_FIRST_RULE,
    NOT_MEASURED_TEXT,
    ROUNDING_RULE,
    band_indices,
    band_of,
    conversion_bands,
    flag_text,
    range_text,
    risk_text,
    risk_text_rounding,
    round_half_up,
    round_half_up_array,
    row_index,
    row_indices,
    total_band_indices,
)

CAUTIONS = cautions()  # what quantize writes into every new sheet (scorecard/cautions.py)

__all__ = [
    "CAUTIONS",
    "DOCUMENT_TAG",
    "FORMAT_VERSION",
    "MEASURE_FIRST_RULE",
    "NOT_MEASURED_TEXT",
    "ROUNDING_RULE",
    "band_indices",
    "band_of",
    "conversion_bands",
    "flag_text",
    "load_sheet",
    "range_text",
    "risk_text",
    "risk_text_rounding",
    "round_half_up",
    "round_half_up_array",
    "total_band_indices",
    "row_index",
    "row_indices",
    "save_sheet",
    "sheet_fingerprint",
    "short_fingerprint",
    "validate_sheet_dict",
]
