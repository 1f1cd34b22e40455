"""Install exactly the lowest versions pyproject.toml declares, in a fresh virtual environment, and run a smoke
test there: the demo end to end and a few test files. A declared floor the code does not work with fails here.

    python3.11 tests/min_versions.py [--venv DIR] [--keep]

Every `name>=X` requirement (the project's and its test extras) is installed as `name==X`; the project itself
without dependencies, so pip cannot pick anything newer. Exit status: that of the first failing step. Not part
of the pytest suite (it installs packages); `.ci/run` runs it after the suite.
"""

from __future__ import annotations

import argparse
import re
import shutil
import subprocess
import sys
import tempfile
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
# the test files run at the floors: fitting, the documents, quantize, render and read-back, the command line
SMOKE_TESTS = ["tests/fit/test_estimator_api.py", "tests/test_hostile_input.py", "tests/test_shutdown.py",
               "tests/test_output_paths.py", "tests/test_parquet_input.py"]


def pinned_minimums(pyproject: Path) -> list[str]:
    project = tomllib.loads(pyproject.read_text("utf-8"))["project"]
    requirements = list(project["dependencies"]) + list(project.get("optional-dependencies", {}).get("test", []))
    pins = []
    for requirement in requirements:
        found = re.fullmatch(r"\s*([A-Za-z0-9_.\-\[\]]+)\s*>=\s*([0-9][^,;\s]*)\s*", requirement)
        if not found:
            raise SystemExit(f"pyproject.toml: {requirement!r} has no single '>=' floor to install")
        pins.append(f"{found.group(1)}=={found.group(2)}")
    return pins


def run(command: list, cwd: Path) -> None:
    print("+", " ".join(map(str, command)), flush=True)
    done = subprocess.run(command, cwd=cwd)
    if done.returncode:
        raise SystemExit(done.returncode)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--venv", type=Path, help="where to make the environment (default: a temporary folder)")
    parser.add_argument("--keep", action="store_true", help="keep the environment afterwards")
    args = parser.parse_args()
    venv = args.venv or Path(tempfile.mkdtemp(prefix="scorecard-min-versions-"))
    pins = pinned_minimums(ROOT / "pyproject.toml")
    print("declared minimums:", " ".join(pins), flush=True)
    try:
        run([sys.executable, "-m", "venv", "--clear", venv], ROOT)
        python = venv / "bin" / "python"
        run([python, "-m", "pip", "install", "-q", *pins], ROOT)
        run([python, "-m", "pip", "install", "-q", "--no-deps", "."], ROOT)
        run([python, "-m", "pip", "check"], ROOT)
        with tempfile.TemporaryDirectory() as out:
            run([venv / "bin" / "scorecard", "demo", "--rows", "4000", "-o", Path(out) / "demo"], ROOT)
        run([python, "-m", "pytest", "-x", "-p", "no:cacheprovider", *SMOKE_TESTS], ROOT)
    finally:
        if not args.keep:
            shutil.rmtree(venv, ignore_errors=True)
    print("the declared minimum versions pass the smoke test")


if __name__ == "__main__":
    main()
