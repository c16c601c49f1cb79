"""``tessera forcefields``: the force fields and water models ``--forcefield``/``--water`` choose."""
from __future__ import annotations

import argparse

from energy.io.forcefields import DEFAULT_FORCE_FIELD_NAME, FORCE_FIELDS


def configure_parser(p: argparse.ArgumentParser) -> None:
    """No options: the command only lists."""


def run(args) -> int:
    """Print one line per force field: name, water models (default first) and its OpenMM files."""
    for name, choice in FORCE_FIELDS.items():
        waters = [choice.default_water, *(w for w in choice.waters if w != choice.default_water)]
        default = " (default)" if name == DEFAULT_FORCE_FIELD_NAME else ""
        print(f"{name}{default}: {choice.description}; --water {', '.join(waters)} "
              f"(default {choice.default_water}); OpenMM files {', '.join(choice.files)}")
    return 0
