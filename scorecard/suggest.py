"""'Did you mean ...?' for a mistyped column, feature, level or verb (difflib from the standard library)."""

from __future__ import annotations

import difflib

CUTOFF = 0.7  # above difflib's default 0.6, which offers "sodium" for "delirum": only near spellings


def close_matches(word: str, known, n: int = 2) -> list[str]:
    """The known names most like `word`, best first (case is ignored when comparing)."""
    known = [str(k) for k in known]
    by_lower = {}
    for k in known:
        by_lower.setdefault(k.lower(), k)
    found = difflib.get_close_matches(str(word).lower(), list(by_lower), n=n, cutoff=CUTOFF)
    return [by_lower[f] for f in found]


def did_you_mean(word: str, known, n: int = 2) -> str:
    """'; did you mean 'delirium'?' (or '... 'a' or 'b'?'), or '' when nothing is close."""
    found = close_matches(word, known, n)
    if not found:
        return ""
    return "; did you mean " + " or ".join(repr(f) for f in found) + "?"
