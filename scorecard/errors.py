"""The two kinds of failure a user sees, each with its own exit code (DESIGN: 2 bad input, 3 failed check)."""


class UserError(Exception):
    """Bad input or usage: printed as one line naming the file, row or field and the fix; exit code 2."""

    exit_code = 2


class CheckFailed(Exception):
    """A check ran and failed its bound: printed as one line with the figures; exit code 3."""

    exit_code = 3
