"""Where an output may go: the one home of the rules every written file follows (scorecard.jsondoc's atomic
writes and the commands' early checks both call `check_target`).

- `-o` names a regular file or a new path: a symbolic link, a device node or a folder is refused (writing
  through a rename would replace a device node or a link with a plain file).
- A read-only file is refused unless the verb is given --force (a 0444 file is someone's "do not replace").
- `-` means standard output for text outputs (CSV, JSON); a binary output (PDF, PNG) says it needs a file.
- The folder must exist and take a new file: checked before any work, with a probe file, so `/proc/x.csv`
  or a read-only folder is one line, not a traceback after minutes of work.
"""

from __future__ import annotations

import contextvars
import os
import stat
import tempfile
from pathlib import Path

from scorecard.errors import UserError

STDOUT = "-"
# set by the --force option that scorecard.cli adds to every verb with an -o option
force_overwrite: contextvars.ContextVar[bool] = contextvars.ContextVar("force_overwrite", default=False)


def is_stdout(path) -> bool:
    return str(path) == STDOUT


def check_target(path, option: str = "-o", text: bool = True) -> Path:
    """`path` as a Path after the rules above (UserError naming `option` and the fix otherwise)."""
    if is_stdout(path):
        if not text:
            raise UserError(f"{option} -: this output is a binary file (PDF or image) and cannot go to standard "
                            f"output; give a file name with {option}")
        return Path(STDOUT)
    target = Path(path)
    if target.is_symlink():
        raise UserError(f"{target}: is a symbolic link; give {option} a regular file or a new path (the link is not followed)")
    try:
        info = target.stat()
    except FileNotFoundError:
        info = None
    except OSError as exc:
        raise UserError(f"{target}: cannot be examined ({exc.strerror}); choose another {option} path") from None
    if info is not None:
        if stat.S_ISDIR(info.st_mode):
            raise UserError(f"{target}: is a folder; give a file name with {option}")
        if not stat.S_ISREG(info.st_mode):
            raise UserError(f"{target}: is a device or special file, not a regular file; choose another {option} path")
        if not info.st_mode & 0o222 and not force_overwrite.get():
            raise UserError(f"{target}: is read-only; choose another {option} path, or add --force to replace it")
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise UserError(f"{target}: folder {folder} does not exist; create it or choose another {option} path")
    probe_folder(folder, f"{option} {target}")
    return target


def probe_folder(folder: Path, what: str) -> None:
    """Create and remove a probe file in `folder`, so an unwritable folder is refused before any work."""
    try:
        fd, probe = tempfile.mkstemp(prefix=".scorecard-probe.", dir=folder)
        os.close(fd)
        os.unlink(probe)
    except OSError as exc:
        raise UserError(f"{what}: cannot write in folder {folder} ({exc.strerror or exc}); choose another folder") from None


def check_preview_folder(path) -> Path:
    """A --preview folder: an existing folder or a new one (created here, so a folder that cannot be made or
    written is refused before the PDF is written)."""
    folder = Path(path)
    if folder.exists() and not folder.is_dir():
        raise UserError(f"--preview {folder}: is a file; give a folder for the page previews (it is created if absent)")
    if folder.is_symlink():
        raise UserError(f"--preview {folder}: is a symbolic link; give a folder")
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise UserError(f"--preview {folder}: cannot create the folder ({exc.strerror or exc}); choose another folder") from None
    probe_folder(folder, f"--preview {folder}")
    return folder
