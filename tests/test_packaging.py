"""The installed package must contain every subpackage and its data files (schemas, layouts)."""

import tomllib
from pathlib import Path

from setuptools import find_packages

ROOT = Path(__file__).resolve().parents[1]


def test_every_subpackage_is_listed_in_pyproject():
    listed = set(tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"])
    found = {p for p in find_packages(str(ROOT), include=["scorecard*"])} | {"scorecard.layouts"}
    assert found - listed == set(), "add these packages to [tool.setuptools] packages in pyproject.toml"
    assert listed - found == set(), "these packages are listed in pyproject.toml but do not exist"
