"""Quantise an additive model into integer point tables under an explicit bound on accuracy loss.

Public entry: `quantize_model(model, data=None, bound=Bound(), ...) -> sheet document (dict)`. Methods, one
module each: `segment` (optimal rows per term), `nice` (readable cuts), `allocate` (rows across terms),
`refit` (joint row values), `points` (scale and integer rounding), `figures`, `certificate`,
`framingham` (the published points method, the benchmark's baseline). See docs/quantization.md.
"""

from scorecard.quantize.quantizer import Bound, parse_bands, quantize_model

__all__ = ["Bound", "parse_bands", "quantize_model"]
