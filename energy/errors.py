"""Typed exceptions of the energy core.

Every expected failure (bad file, missing parameter, mismatched inputs) raises a subclass of
:class:`EnergyError`.  Each subclass also inherits a builtin so that generic handlers still catch
it.  Messages say what was expected, what was found and, where possible, how to fix it.
"""
from __future__ import annotations


class EnergyError(Exception):
    """Base of every expected failure in :mod:`energy`."""


class StructureFileError(EnergyError, ValueError):
    """A file could not be read or holds a malformed record.

    Prints as ``path:line: message`` when the line is known.
    """

    def __init__(self, path, message: str, line: int | None = None):
        where = f"{path}:{line}" if line is not None else f"{path}"
        super().__init__(f"{where}: {message}")
        self.path, self.line, self.detail = path, line, message


class MissingParametersError(EnergyError, KeyError):
    """Force-field parameters are missing for one or more type combinations.

    ``missing`` maps a term kind (``"bond"``, ``"angle"``, ...) to a list of
    ``(type_tuple, example_atoms)`` entries, so every gap is reported in one go.
    """

    def __init__(self, missing: dict[str, list[tuple[tuple[str, ...], str]]]):
        self.missing = missing
        parts = []
        for kind, entries in missing.items():
            shown = "; ".join(f"{'-'.join(types)} (e.g. {example})" for types, example in entries)
            parts.append(f"{len(entries)} {kind} type combination(s): {shown}")
        super().__init__("missing parameters: " + " | ".join(parts)
                         + ". Add them to a parameter/stream file and pass it with --params.")

    def __str__(self) -> str:  # KeyError would otherwise quote the message
        return self.args[0]


class InputMismatchError(EnergyError, ValueError):
    """Two inputs that must describe the same atoms disagree (count, names, order)."""


class UnknownResidueError(EnergyError, ValueError):
    """The built-in force field has no template for one or more residues."""


class SettingsError(EnergyError, ValueError):
    """An invalid combination of computation settings."""


class SelectionError(EnergyError, ValueError):
    """An atom selection string is invalid or selects nothing."""
