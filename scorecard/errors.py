"""The two kinds of failure a user sees, each with its own exit code (2 bad input, 3 failed check), and how an
error line quotes a value."""

import json


class UserError(Exception):
    """Bad input or usage: printed as one line naming the file, row or field and the fix; exit code 2."""

    exit_code = 2


class CheckFailed(Exception):
    """A check ran and failed its bound: printed as one line with the figures; exit code 3."""

    exit_code = 3


def shown(value, limit: int = 60, quote=None) -> str:
    """A value as an error line quotes it: JSON (or `quote`), cut to `limit` characters with the full length said."""
    text = quote(value) if quote else json.dumps(value, ensure_ascii=False)
    if len(text) <= limit:
        return text
    return f"{text[:limit]}… ({len(text):,} characters)"
