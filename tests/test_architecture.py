"""The house rules of the folder layout, checked on the source (ast, no imports run): the audit stays
independent of quantize and render, commands use stages only through their public names, and DEVELOPERS.md
cites only files that exist."""

from __future__ import annotations

import ast
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "scorecard"


def imports_of(path: Path) -> list[tuple[str, str | None, int]]:
    """(module, imported name or None, line) for every import in the file, inside functions too."""
    tree = ast.parse(path.read_text("utf-8"), filename=str(path))
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [(alias.name, None, node.lineno) for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            found += [(node.module, alias.name, node.lineno) for alias in node.names]
    return found


def _modules(folder: str) -> list[Path]:
    return sorted((PACKAGE / folder).rglob("*.py"))


@pytest.mark.parametrize("path", _modules("audit"), ids=lambda p: p.name)
def test_the_audit_never_imports_quantize_or_render(path):
    for module, name, line in imports_of(path):
        full = f"{module}.{name}" if name else module
        for stage in ("scorecard.quantize", "scorecard.render"):
            assert not (full == stage or full.startswith(stage + ".")), (
                f"{path.relative_to(ROOT)}:{line} imports {full}: the audit recomputes from the sheet document alone")


@pytest.mark.parametrize("path", _modules("quantize"), ids=lambda p: p.name)
def test_quantize_never_imports_the_audit(path):
    # the audit is the independent measurement of what quantize made; rules both need live in scorecard.sheet
    for module, name, line in imports_of(path):
        full = f"{module}.{name}" if name else module
        assert not (full == "scorecard.audit" or full.startswith("scorecard.audit.")), (
            f"{path.relative_to(ROOT)}:{line} imports {full}: put a rule both stages need in scorecard.sheet")


@pytest.mark.parametrize("path", _modules("review"), ids=lambda p: p.name)
def test_the_review_uses_the_quantizer_only_through_its_public_entry(path):
    # the review previews a default sheet (scorecard/review/preview.py) but never decides a row itself
    for module, name, line in imports_of(path):
        if module.startswith("scorecard.quantize."):
            raise AssertionError(f"{path.relative_to(ROOT)}:{line} imports {module}: use `from scorecard.quantize import ...`")
        if module == "scorecard.quantize" and name is not None:
            import scorecard.quantize

            assert name in scorecard.quantize.__all__, f"{path.relative_to(ROOT)}:{line} imports {name}, not public"


@pytest.mark.parametrize("path", _modules("commands"), ids=lambda p: p.name)
def test_commands_use_only_public_names_of_the_stages(path):
    for module, name, line in imports_of(path):
        if not module.startswith("scorecard.") or module.startswith("scorecard.commands"):
            continue
        parts = module.split(".") + ([name] if name else [])
        private = [p for p in parts if p.startswith("_") and p != "__version__"]
        assert not private, f"{path.relative_to(ROOT)}:{line} imports {'.'.join(parts)}: {private[0]} is private to its stage"


def test_the_rules_catch_what_they_are_meant_to(tmp_path):
    # the checks above must be able to fail: a file with both faults is seen by imports_of
    bad = tmp_path / "bad.py"
    bad.write_text("from scorecard.render.pages import render_pdf\n\ndef f():\n    from scorecard.fit.columns import _x\n")
    found = imports_of(bad)
    assert ("scorecard.render.pages", "render_pdf", 1) in found and ("scorecard.fit.columns", "_x", 4) in found


def test_developers_guide_cites_only_files_in_the_repository():
    text = (ROOT / "DEVELOPERS.md").read_text("utf-8")
    cited = set(re.findall(r"`((?:scorecard|docs|tests|layouts|example_models)/[\w./-]*\w)/?`", text))
    assert cited, "the guide cites no files at all?"
    missing = sorted(c for c in cited if not (ROOT / c).exists())
    assert not missing, f"DEVELOPERS.md cites files that are not in the repository: {missing}"
    assert "DESIGN" not in text, "DEVELOPERS.md points at design notes that are not in the repository"


def test_no_merge_conflict_markers_were_committed():
    # a merge once left '<<<<<<< HEAD' ... '>>>>>>> main' in DEVELOPERS.md (git's own marker lines)
    marker = re.compile(r"^(<{7} |>{7} |={7}$)", re.M)
    texts = [ROOT / "DEVELOPERS.md", ROOT / "README.md", ROOT / "pyproject.toml",
             *(ROOT / "docs").glob("*.md"), *(ROOT / "scorecard").rglob("*.py"), *(ROOT / "tests").rglob("*.py")]
    marked = [str(p.relative_to(ROOT)) for p in texts if p.exists() and marker.search(p.read_text("utf-8"))]
    assert not marked, f"merge conflict markers left in {marked}"
