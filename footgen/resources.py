"""Where the shipped data folders are: the installed packages ``footgen.schemas`` and
``footgen.templates`` (mapped from the top-level ``schemas/`` and ``templates/`` folders by
pyproject.toml), or those folders themselves when footgen runs from a source checkout."""

from __future__ import annotations

from importlib import resources
from importlib.abc import Traversable
from pathlib import Path


def shipped(folder: str) -> Traversable:
    """The shipped data folder ``folder`` ("schemas" or "templates")."""
    try:
        return resources.files(f"footgen.{folder}")
    except ModuleNotFoundError:  # running from a checkout: the folder sits beside the package
        return Path(__file__).resolve().parent.parent / folder
