"""Small pieces every command shares: output checks and stderr messages."""

from __future__ import annotations

from pathlib import Path

import click

from scorecard.errors import UserError


def output_path(path: str, *inputs: str, option: str = "-o") -> Path:
    """Refuse an output that would overwrite one of the inputs (DESIGN: never silently overwrite an input).

    `option` is the option the user typed for this output (e.g. --json), so the message names it."""
    out = Path(path)
    for given in inputs:
        if given and Path(given).exists() and out.exists() and out.resolve() == Path(given).resolve():
            raise UserError(f"{out}: is also an input of this command; choose another path with {option}")
    if out.is_dir():
        raise UserError(f"{out}: is a folder; give a file name with {option}")
    parent = out.parent if str(out.parent) else Path(".")
    if not parent.is_dir():
        raise UserError(f"{out}: folder {parent} does not exist; create it or choose another {option} path")
    return out


def say(message: str) -> None:
    """Progress and notes go to stderr so stdout stays clean for results."""
    click.echo(message, err=True)


def preview_folder(path: str | None) -> Path | None:
    """Check --preview before any work, so a file given as the folder stops the command before the PDF is written."""
    if not path:
        return None
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise UserError(f"--preview {folder}: is a file; give a folder for the page previews (it is created if absent)")
    return folder
