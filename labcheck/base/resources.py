"""Where the shipped lab specs and report templates are.

Installed, they are the packages ``labcheck.lab_specs`` and
``labcheck.report_templates`` (mapped from the top-level folders
``lab_specs/`` and ``report_templates/`` by pyproject.toml).  Run from a
source checkout without installing, the top-level folders are used.
"""

from __future__ import annotations

import importlib.resources
from pathlib import Path

__all__ = ["specs_dir", "templates_dir", "shipped_spec"]

_REPO = Path(__file__).resolve().parents[2]  # labcheck/base/resources.py -> the checkout


def _package_dir(package: str, fallback: str) -> Path:
    try:
        path = Path(str(importlib.resources.files(package)))
        if path.is_dir():
            return path
    except ModuleNotFoundError:
        pass
    return _REPO / fallback


def specs_dir() -> Path:
    return _package_dir("labcheck.lab_specs", "lab_specs")


def templates_dir() -> Path:
    return _package_dir("labcheck.report_templates", "report_templates")


def shipped_spec(name: str) -> Path:
    """Path of a shipped spec by file name or lab id (``horizon_dip``)."""
    stem = name[:-5] if name.endswith(".toml") else name
    return specs_dir() / f"{stem}.toml"
