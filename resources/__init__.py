"""What Tessera ships that is not code: the application icon and desktop entry, the window's
colour maps and style sheet, and the data tables the code reads (Bondi radii).

Always read through :func:`path`, :func:`text` or :func:`json_table` (``importlib.resources``),
never through paths relative to the source tree, so that an installed copy finds them too.
"""
from __future__ import annotations

import json
from functools import cache
from importlib import resources as _resources
from importlib.resources.abc import Traversable


def path(name: str) -> Traversable:
    """The resource file ``name`` (e.g. ``"tessera.svg"``), as an importlib Traversable."""
    return _resources.files(__name__).joinpath(name)


def text(name: str) -> str:
    """The text of resource ``name`` (UTF-8)."""
    return path(name).read_text(encoding="utf-8")


@cache
def json_table(name: str):
    """The parsed JSON resource ``name`` (read once per process; treat it as read-only)."""
    return json.loads(text(name))
