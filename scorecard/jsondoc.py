"""Canonical JSON, fingerprints (of documents and of input files) and atomic writes shared by the model and sheet documents.

The canonical form is what is hashed: sorted keys, no insignificant whitespace, UTF-8, every float
rounded to CANONICAL_DIGITS significant digits and then written in Python's shortest round-trip form,
-0.0 written as 0.0, and NaN/inf refused. The file on disk is the same content, indented for people.

Why round: the same inputs give floats that differ in the 15th-17th digit between machines (BLAS, libm,
CPU), and a fingerprint over the last bits would then differ between the methodologist's and the
auditor's machines. Rounding is idempotent (load -> save -> load never changes a number).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import math
import os
import re
import sys
import tempfile
from decimal import ROUND_DOWN, Decimal
from functools import lru_cache
from importlib import resources
from pathlib import Path
from typing import Any

import jsonschema

from scorecard.errors import UserError, shown
from scorecard.outputs import check_target, is_stdout
from scorecard.shutdown import deferred, raise_if_received, track_temporary, untrack_temporary


# 11 significant digits (docs/model-document.md "Canonical numbers"): measured on the demo's true model,
# rounding every number moves a patient's log-odds by at most 1.5e-10 (< 1e-9), and no one of its 2283
# floats changes its rounded form when moved by 4 units in the last place (at 12 digits one does).
CANONICAL_DIGITS = 11
# A computed value that should be 0 comes out as 0, 1e-17 or -3e-16 depending on the machine: magnitudes
# below this are written as 0 (far below any printed precision or any effect on a risk).
CANONICAL_ZERO = 1e-12


def canonical_float(value: float) -> float:
    """`value` rounded to CANONICAL_DIGITS significant digits (half to even), 0.0 below CANONICAL_ZERO."""
    if not math.isfinite(value):
        raise ValueError("NaN or infinite number cannot be written to a document")
    if abs(value) < CANONICAL_ZERO:
        return 0.0
    rounded = float(f"{value:.{CANONICAL_DIGITS}g}")
    if math.isinf(rounded):  # within half a digit of the largest float: round towards zero instead
        rounded = float(Decimal(value).quantize(Decimal(f"1e{math.floor(math.log10(abs(value))) - CANONICAL_DIGITS + 1}"),
                                                rounding=ROUND_DOWN))
    return rounded


def normalise(value: Any) -> Any:
    """Plain JSON types only: numpy scalars and arrays become floats/ints/lists; floats take their canonical
    form (canonical_float)."""
    if isinstance(value, dict):
        return {str(k): normalise(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [normalise(v) for v in value]
    if hasattr(value, "tolist") and not isinstance(value, (str, bytes)):
        return normalise(value.tolist())
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        return int(value)
    if isinstance(value, float):
        return canonical_float(float(value))
    raise TypeError(f"cannot write {type(value).__name__} to a JSON document")


def canonical_bytes(document: dict) -> bytes:
    """The exact bytes a fingerprint is computed from."""
    return json.dumps(
        normalise(document), sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
    ).encode("utf-8")


def fingerprint(document: dict, exclude: tuple[str, ...] = ()) -> str:
    """SHA-256 (hex) of the canonical form, leaving out top-level keys in `exclude`."""
    body = {k: v for k, v in document.items() if k not in exclude}
    return hashlib.sha256(canonical_bytes(body)).hexdigest()


def file_sha256(path: str | Path) -> str:
    """SHA-256 (hex) of a file's bytes, read in blocks so a large cohort is not held twice in memory."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def pretty_text(document: dict) -> str:
    return json.dumps(normalise(document), sort_keys=True, indent=2, ensure_ascii=False, allow_nan=False) + "\n"


def atomic_write_bytes(path: str | os.PathLike, data: bytes, protect: tuple[str | os.PathLike, ...] = (),
                       text: bool = False) -> None:
    """Write to a temporary file beside `path`, then rename, so a reader never sees half a file.

    The target follows scorecard.outputs (a regular file or a new path; `-` is standard output when the
    output is `text`). `protect` lists input files this output must not overwrite (never silently overwrite
    an input).
    """
    with atomic_output(path, protect, text=text) as tmp:
        with open(tmp, "wb") as handle:
            handle.write(data)


@contextlib.contextmanager
def atomic_output(path: str | os.PathLike, protect: tuple[str | os.PathLike, ...] = (), text: bool = False):
    """A temporary path beside `path` to write into (in pieces, by any writer); renamed to `path` when the
    block ends, removed if it raises: a streamed output is whole or absent. `protect` and `text` as in
    atomic_write_bytes; for `-` the finished file goes to standard output."""
    target = check_target(path, text=text)
    if is_stdout(target):
        tmp = None
        try:
            with deferred():  # SIGINT/SIGTERM wait until the temporary file is inside the block that removes it
                fd, tmp = tempfile.mkstemp(prefix=".scorecard-stdout.", suffix=".tmp")
                track_temporary(tmp)
                os.close(fd)
            yield Path(tmp)
            sys.stdout.flush()
            with open(tmp, "rb") as handle:
                while block := handle.read(1 << 20):
                    sys.stdout.buffer.write(block)
            sys.stdout.buffer.flush()
        finally:
            if tmp is not None:
                os.unlink(tmp)
                untrack_temporary(tmp)
        return
    for other in protect:
        try:
            if target.exists() and Path(other).exists() and target.resolve() == Path(other).resolve():
                raise UserError(f"{target}: this is also an input file; choose another output path with -o")
        except OSError:
            pass
    directory = target.parent if str(target.parent) else Path(".")
    tmp = None
    try:
        with deferred():  # SIGINT/SIGTERM wait until the temporary file is inside the block that removes it
            try:
                fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=directory)
                track_temporary(tmp)
            except OSError as exc:
                raise UserError(f"{target}: cannot write in folder {directory} ({exc.strerror or exc}); choose another folder") from None
        # mkstemp makes the file private (0600); give it the permissions a plain open() would
        os.chmod(tmp, 0o666 & ~_current_umask())
        os.close(fd)
        yield Path(tmp)
        raise_if_received()
        os.replace(tmp, target)
    except BaseException:
        if tmp is not None:
            with contextlib.suppress(FileNotFoundError):
                os.unlink(tmp)
        raise
    finally:
        if tmp is not None:
            untrack_temporary(tmp)


def _current_umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def atomic_write_text(path: str | os.PathLike, text: str, protect: tuple[str | os.PathLike, ...] = ()) -> None:
    atomic_write_bytes(path, text.encode("utf-8"), protect=protect, text=True)


def read_input_bytes(path: str | os.PathLike, what: str) -> bytes:
    """The bytes of an input file, or one UserError line naming it (missing, a folder, unreadable)."""
    p = Path(path)
    try:
        return p.read_bytes()
    except FileNotFoundError:
        raise UserError(f"{p}: no such file; check the path of the {what}") from None
    except IsADirectoryError:
        raise UserError(f"{p}: is a folder, expected a {what} file") from None
    except OSError as exc:
        raise UserError(f"{p}: cannot read ({exc.strerror}); check permissions") from None


def read_json_file(path: str | os.PathLike, what: str, allow_nonfinite: bool = False) -> Any:
    """Parse a JSON file, turning every failure into one line naming the file.

    With `allow_nonfinite`, NaN/Infinity are read as floats so the caller's validation can name the field.
    """
    p = Path(path)
    raw = read_input_bytes(p, what)
    if not raw.strip():
        raise UserError(f"{p}: file is empty; expected a {what}")
    try:
        # a byte-order mark at the start is how some editors save UTF-8; it is not part of the document
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise UserError(f"{p}: not UTF-8 text; expected a {what} (JSON)") from None
    problem = _too_deep_or_too_long(text)
    if problem:
        raise UserError(f"{p}: {problem}; expected a {what} as written by scorecard")
    try:
        return json.loads(text, parse_constant=float if allow_nonfinite else _refuse_constant,
                          parse_float=float if allow_nonfinite else _finite_float, object_pairs_hook=_unique_keys)
    except json.JSONDecodeError as exc:
        raise UserError(f"{p}: not valid JSON at line {exc.lineno} column {exc.colno} ({exc.msg}); expected a {what}") from None
    except _DuplicateKey as exc:
        raise UserError(f"{p}: the field {shown(exc.args[0])} is given twice in one object (JSON keeps only the last, "
                        "silently); keep one") from None
    except ValueError as exc:
        raise UserError(f"{p}: {exc}; numbers must be finite") from None


MAX_DEPTH = 64  # the documents nest about 8 levels; far deeper is a broken or hostile file (Python would recurse)
MAX_DIGITS = 40  # a number in a document has at most 17 significant digits; 10**400 would overflow float
_STRING = re.compile(r'"(?:[^"\\]|\\.)*"')
_LONG_DIGITS = re.compile(r"\d{%d,}" % (MAX_DIGITS + 1))


def _too_deep_or_too_long(text: str) -> str | None:
    """Checked before parsing: nesting deeper than MAX_DEPTH, or a number of more than MAX_DIGITS digits."""
    bare = _STRING.sub('""', text)  # brackets and digits inside strings do not count
    depth = deepest = 0
    for char in re.findall(r"[\[\]{}]", bare):
        depth += 1 if char in "[{" else -1
        deepest = max(deepest, depth)
        if deepest > MAX_DEPTH:
            return f"the document nests deeper than {MAX_DEPTH} levels"
    long_number = _LONG_DIGITS.search(bare)
    if long_number:
        return f"a number has more than {MAX_DIGITS} digits ({long_number.group()[:12]}...)"
    return None


class _DuplicateKey(Exception):
    pass


def _unique_keys(pairs: list[tuple[str, Any]]) -> dict:
    doc = dict(pairs)
    if len(doc) != len(pairs):
        seen: set[str] = set()
        raise _DuplicateKey(next(k for k, _ in pairs if k in seen or seen.add(k)))
    return doc


def _finite_float(text: str) -> float:
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"the number {text} is too large")
    return value


def _refuse_constant(name: str) -> Any:
    raise ValueError(f"{name} is not allowed in a document")


# -- schema validation shared by the model and sheet documents -------------------------------------------


@lru_cache(maxsize=None)
def schema_validator(package: str, resource: str) -> jsonschema.protocols.Validator:
    """The validator of a JSON Schema shipped inside `package` (read once)."""
    schema = json.loads(resources.files(package).joinpath(resource).read_text("utf-8"))
    return jsonschema.validators.validator_for(schema)(schema)


def field_path(parts) -> str:
    """`terms[3].edges[0]` from jsonschema's path parts."""
    out = ""
    for p in parts:
        out += f"[{p}]" if isinstance(p, int) else (f".{p}" if out else str(p))
    return out or "(document)"


def schema_error_line(err: jsonschema.ValidationError) -> str:
    """One line naming the field and what is wrong with it."""
    # oneOf / anyOf errors hide the useful message in their context; follow the deepest path
    while err.context:
        err = max(err.context, key=lambda e: (len(e.absolute_path), e.validator != "const"))
    where = field_path(err.absolute_path)
    if err.validator == "const":
        return f"{where}: must be {json.dumps(err.validator_value)}, found {shown(err.instance)}"
    if err.validator == "enum":
        allowed = ", ".join(json.dumps(v) for v in err.validator_value)
        return f"{where}: {shown(err.instance)} is not one of {allowed}"
    # jsonschema's own message quotes the whole value; a 2,000-character text or a long list would swamp the line
    return f"{where}: {err.message.replace(repr(err.instance), shown(err.instance, quote=repr), 1)}"



# -- printed text shared by the model and sheet documents ------------------------------------------------

# bidirectional embeddings/overrides/isolates and marks, zero-width characters and the byte-order mark: they
# change how a text reads without showing, and a PDF reader cannot give them back (verify would then fail)
_INVISIBLE = {0x200B, 0x200C, 0x200D, 0x200E, 0x200F, 0x2028, 0x2029, 0x202A, 0x202B, 0x202C, 0x202D, 0x202E,
              0x2060, 0x2066, 0x2067, 0x2068, 0x2069, 0xFEFF}


def unprintable_character(text: str) -> str | None:
    """'U+202E (a right-to-left or hidden mark)' for the first character a printed text must not hold, or None."""
    import unicodedata

    for char in text:
        code = ord(char)
        if code in _INVISIBLE:
            return f"U+{code:04X} (a hidden or text-direction mark)"
        if unicodedata.category(char) in ("Cc", "Cs", "Co", "Cn") or (unicodedata.category(char) == "Cf"):
            return f"U+{code:04X} (a control character)"
    return None


def first_unprintable(value: Any, parts: list | None = None, skip: tuple[str, ...] = ("provenance",)) -> str | None:
    """'terms[2].label: holds U+FEFF ...; remove it' for the first string in the document (outside the top-level
    keys in `skip`, which hold free text nobody prints) with a character that cannot be printed and read back."""
    parts = parts or []
    if isinstance(value, str):
        bad = unprintable_character(value)
        return f"{field_path(parts)}: holds {bad}; retype the text without it" if bad else None
    if isinstance(value, dict):
        for key in sorted(value):
            if not parts and key in skip:
                continue
            found = first_unprintable(key, parts + [key], skip) or first_unprintable(value[key], parts + [key], skip)
            if found:
                return found
    if isinstance(value, list):
        for i, item in enumerate(value):
            found = first_unprintable(item, parts + [i], skip)
            if found:
                return found
    return None
