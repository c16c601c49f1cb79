"""What Tessera ships that is not code: the application icon and desktop entry, the window's
colour maps and style sheet, and the data tables the code reads (Bondi radii).

Always read through :func:`path`, :func:`text` or :func:`json_table` (``importlib.resources``),
never through paths relative to the source tree, so that an installed copy finds them too.
"""
from __future__ import annotations

import json
import os
from functools import cache
from importlib import resources as _resources
from importlib.resources.abc import Traversable
from pathlib import Path

#: The demo structure the window opens when started without files (the invented scenario).
DEMO_STRUCTURE = ("samples", "scenario", "complex_clash.pdb")


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


def demo_structure() -> Path | None:
    """The demo scenario's structure file, or None if this copy has none.

    Looked for in ``$TESSERA_SAMPLES`` (a folder holding ``scenario/complex_clash.pdb``), then in
    the ``samples/`` folder of the source tree this package was installed from (an editable or
    source install; a wheel ships no samples).
    """
    candidates = []
    if os.environ.get("TESSERA_SAMPLES"):
        candidates.append(Path(os.environ["TESSERA_SAMPLES"]).joinpath(*DEMO_STRUCTURE[1:]))
    package_dir = Path(str(_resources.files(__name__)))
    candidates.append(package_dir.parent.joinpath(*DEMO_STRUCTURE))
    return next((c for c in candidates if c.is_file()), None)
