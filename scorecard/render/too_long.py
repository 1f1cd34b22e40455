"""Which printed text a layout cannot hold, and how long it may be.

reportlab ends a build with a LayoutError when one unbreakable text is taller than any frame; that names a
flowable, not the sheet field a methodologist can shorten. This finds the field by rendering with each long
printed text cut short, then the longest length of it that still renders (a binary search over full renders:
slow, but only on the path that already failed).
"""

from __future__ import annotations

import copy
from typing import Callable, Iterator

from reportlab.platypus.doctemplate import LayoutError

SHORT = 40  # a length every layout holds for any printed text (the narrowest column takes ~20 characters a line)
MOST_TRIED = 12  # long texts tried, longest first, before giving up on naming one


def _strings(node, path: str = "") -> Iterator[tuple[str, str]]:
    if isinstance(node, str):
        yield path, node
    elif isinstance(node, dict):
        for key, value in node.items():
            if key not in ("report", "provenance", "fingerprint"):  # not printed as free text
                yield from _strings(value, f"{path}.{key}" if path else key)
    elif isinstance(node, list):
        for i, value in enumerate(node):
            yield from _strings(value, f"{path}[{i}]")


def _with(sheet: dict, path: str, text: str) -> dict:
    out = copy.deepcopy(sheet)
    node, keys = out, path.replace("]", "").replace("[", ".").split(".")
    for key in keys[:-1]:
        node = node[int(key)] if isinstance(node, list) else node[key]
    last = keys[-1]
    node[int(last) if isinstance(node, list) else last] = text
    return out


def too_long_message(sheet: dict, layout_name: str, renders: Callable[[dict], bool]) -> str | None:
    """'field X (N characters) does not fit …: at most M fit' for the field whose length breaks the layout,
    or None when no single long text is to blame. `renders(sheet)` says whether a sheet lays out."""
    long_texts = sorted(((p, t) for p, t in _strings(sheet) if len(t) > SHORT), key=lambda pt: -len(pt[1]))
    for path, text in long_texts[:MOST_TRIED]:
        if not renders(_with(sheet, path, text[:SHORT])):
            continue
        fits, fails = SHORT, len(text)
        while fails - fits > 1:
            middle = (fits + fails) // 2
            if renders(_with(sheet, path, text[:middle])):
                fits = middle
            else:
                fails = middle
        return (f"{path}: {len(text):,} characters do not fit layout '{layout_name}' (a word or text too long for "
                f"its column or page); at most {fits:,} characters of it fit: shorten it (or break long words) in "
                f"the model and quantize again, or choose a wider layout")
    return None


__all__ = ["LayoutError", "too_long_message"]
