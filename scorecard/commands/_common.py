"""Small pieces every command shares: output checks and stderr messages."""

from __future__ import annotations

import math
from pathlib import Path

import click

from scorecard.errors import UserError
from scorecard.outputs import check_preview_folder, check_target, is_stdout


def output_path(path: str, *inputs: str, option: str = "-o", binary: bool = False) -> Path:
    """Check an output before any work: never one of the inputs (never silently overwrite an input), and the
    rules of scorecard.outputs (a regular file or a new path in a writable folder; `-` is standard output
    unless the output is `binary`, a PDF or an image).

    `option` is the option the user typed for this output (e.g. --json), so the message names it."""
    if is_stdout(path):
        return check_target(path, option, text=not binary)
    out = Path(path)
    for given in inputs:
        if given and Path(given).exists() and out.exists() and out.resolve() == Path(given).resolve():
            raise UserError(f"{out}: is also an input of this command; choose another path with {option}")
    return check_target(out, option, text=not binary)


def say(message: str) -> None:
    """Progress and notes go to stderr so stdout stays clean for results."""
    click.echo(message, err=True)


def preview_folder(path: str | None) -> Path | None:
    """Check --preview before any work (scorecard.outputs), so a file given as the folder, or a folder that
    cannot be written, stops the command before the PDF is written."""
    return check_preview_folder(path) if path else None


class FiniteRange(click.FloatRange):
    """click's FloatRange, which lets nan and inf through its bounds (every comparison with nan is false):
    a number option of ours is a finite number inside its range."""

    def convert(self, value, param, ctx):
        number = super().convert(value, param, ctx)
        if not math.isfinite(number):
            self.fail(f"{value!r} is not a finite number.", param, ctx)
        return number


class BadValue(ValueError):
    """Raised by a FeatureValue's value parser with the reason, in words, that the value is refused."""


class FeatureValue(click.ParamType):
    """NAME=VALUE, the one parser of every option that names a feature or term and gives it a value
    (fit --unit/--label/--decimals/--order, explain --values, edit --declare/--pool-levels/--hold-*/...).

    Converts to the pair (name, value), both stripped of spaces; `value` turns the text into what the option
    needs and raises ValueError for a bad one (BadValue to say why in words). Whether the name is known is the
    command's business: it knows the model or the table. A malformed value is one line naming the option, the
    text given and an example; exit 2."""

    name = "name=value"

    def __init__(self, example: str, value=str, form: str = "FEATURE=VALUE", empty_ok: bool = False) -> None:
        self.example, self.value, self.form, self.empty_ok = example, value, form, empty_ok

    def convert(self, text, param, ctx):
        if isinstance(text, tuple):  # already a pair: a command invoked from Python (the demo) with parsed values
            return text
        option = max(param.opts, key=len) if param is not None else "option"
        name, eq, value = str(text).partition("=")
        if not eq or not name.strip() or not (value.strip() or self.empty_ok):
            raise UserError(f"{option} {text!r}: write it as {self.form}, e.g. {option} {self.example}")
        try:
            return name.strip(), self.value(value.strip())
        except BadValue as exc:
            raise UserError(f"{option} {text!r}: {exc}; e.g. {option} {self.example}") from None
        except ValueError:
            why = f"{value.strip()!r} is not a valid value"
            raise UserError(f"{option} {text!r}: {why}; e.g. {option} {self.example}") from None


def level_list(text: str) -> list[str]:
    """LEVEL,LEVEL,... as a list of stripped, non-empty level names."""
    return [lv.strip() for lv in text.split(",") if lv.strip()]


def approved_by_option(function):
    """--approved-by APPROVER.pub, shared by the verbs that use a sheet (check, verify, score)."""
    return click.option(
        "--approved-by", "approved_by", metavar="APPROVER.pub", type=click.Path(),
        help="The approver's public key (from `scorecard keygen`): refuse (exit 3) a sheet that this key did not "
             "approve exactly as it is, bound included.")(function)


def require_approval(sheet: dict, sheet_path: str, approved_by: str | None) -> dict | None:
    """The sheet's approval checked against --approved-by (CheckFailed, exit 3, when it does not match);
    None when no key was given."""
    if not approved_by:
        return None
    from scorecard.sheet.approval import check_approval, load_public_key, signature_short

    approval = check_approval(sheet, load_public_key(approved_by), str(sheet_path), str(approved_by))
    say(f"approval: signed by {approval['name']} at {approval['approved_at']} with key {approval['key_fingerprint']} "
        f"(signature {signature_short(approval)}); matches {approved_by}")
    return approval
