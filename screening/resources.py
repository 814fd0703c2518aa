"""Where the files shipped with heatscreen are: rule sets, memo templates, the unit table, demo cases.

In a source checkout or an editable install the repository's own ``rules/`` and ``templates/``
folders are used; in an installed package their copies under ``screening/data/``. Every module
finds shipped files through this one, never through its own ``__file__``.
"""
from __future__ import annotations

from importlib.resources import files
from importlib.resources.abc import Traversable
from pathlib import Path

PACKAGE_DIR = Path(__file__).resolve().parent
REPOSITORY_DIR = PACKAGE_DIR.parent
DATA_DIR = PACKAGE_DIR / "data"


def rule_set_candidates(name: str = "default.toml") -> tuple[Path, ...]:
    """Where a shipped rule file may be, in the order looked at."""
    return (REPOSITORY_DIR / "rules" / name, DATA_DIR / "rules" / name)


def template_dir_candidates() -> tuple[Path, ...]:
    """Where the shipped memo template set may be, in the order looked at."""
    return (REPOSITORY_DIR / "templates", DATA_DIR / "templates")


def unit_table_path() -> Path:
    """The unit table written by ``python -m screening.case.units`` (SI factors computed with pint)."""
    return DATA_DIR / "unit_table.json"


def shipped(relative: str) -> Traversable:
    """A file or folder inside the installed package, e.g. ``data/unit_table.json``."""
    return files("screening").joinpath(relative)


def demo_cases() -> Traversable:
    """The folder of bundled demo cases (an invented site), with ``registers/`` and ``templates/``."""
    return shipped("demo_cases")
