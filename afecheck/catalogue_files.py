"""Where the shipped rule catalogue (rule pages, rule sets, retired ids) is read from.

Installed, it is the package ``afecheck._catalogue`` (pyproject.toml maps the ``rules/`` folder onto it). When
afecheck is imported from a source folder instead (``python -m afecheck`` in the repository root puts that folder
ahead of any installed copy), no such package exists there, and the catalogue is the ``rules/`` folder beside it.
"""

from __future__ import annotations

from functools import cache
from importlib import resources
from importlib.resources.abc import Traversable
from pathlib import Path

PACKAGE = "afecheck._catalogue"


@cache
def catalogue_root() -> Traversable:
    """The catalogue's top folder: the installed package, else the source tree's ``rules/`` folder."""
    try:
        return resources.files(PACKAGE)
    except ModuleNotFoundError:
        source = Path(__file__).resolve().parent.parent / "rules"
        if source.is_dir():
            return source
        raise
