"""Typed exceptions of the energy core.

Every expected failure (bad file, missing parameter, mismatched inputs) raises a subclass of
:class:`EnergyError`.  Each subclass also inherits a builtin so that generic handlers still catch
it.  Messages say what was expected, what was found and, where possible, how to fix it.

Every message is one line of at most :data:`MESSAGE_CAP` characters: :func:`one_line` folds
newlines and control characters (third-party text is passed through it), :func:`quote_field`
quotes at most :data:`FIELD_CAP` characters of an offending field, and :func:`shown_list` lists a
few items and says how many more there are.
"""
from __future__ import annotations

#: Longest message an :class:`EnergyError` carries (characters): room for a long file path, a
#: capped list of residues and the advice that fixes it.
MESSAGE_CAP = 600
#: Longest piece of an offending input field quoted in a message (characters).
FIELD_CAP = 80


def one_line(text, cap: int = MESSAGE_CAP) -> str:
    """``text`` as one line of printable characters, at most ``cap`` characters long.

    Runs of whitespace (newlines included) become one space; other control characters (NUL,
    escape sequences) and unpaired surrogates become ``?``; a text longer than ``cap`` is cut
    and ends with ``... (N more characters)``.

    Parameters
    ----------
    text : object
        The text (passed through ``str``).
    cap : int
        Longest result, characters (default :data:`MESSAGE_CAP`).

    Returns
    -------
    str
        The folded, capped line.
    """
    text = str(text)
    head = text[:20 * cap]  # never fold a megabyte to show 300 characters
    unread = len(text) - len(head)
    chars: list[str] = []
    for ch in head:
        if ch.isspace():
            if chars and chars[-1] != " ":
                chars.append(" ")
        elif not ch.isprintable() or "\ud800" <= ch <= "\udfff":
            chars.append("?")
        else:
            chars.append(ch)
    flat = "".join(chars).strip()
    if not unread and len(flat) <= cap:
        return flat
    total = len(flat) + unread
    keep = max(0, cap - len(f"... ({total} more characters)"))
    return flat[:keep].rstrip() + f"... ({total - keep} more characters)"


def quote_field(text, cap: int = FIELD_CAP) -> str:
    """``repr`` of an offending field, cut to ``cap`` characters (with how many were left out).

    Parameters
    ----------
    text : object
        The field (passed through ``str``).
    cap : int
        Most characters of the field quoted (default :data:`FIELD_CAP`).

    Returns
    -------
    str
        ``repr`` of the field, followed by ``... (N more characters)`` when it was cut.
    """
    text = str(text)
    if len(text) <= cap:
        return repr(text)
    return f"{text[:cap]!r}... ({len(text) - cap} more characters)"


def shown_list(items, limit: int = 5, sep: str = ", ") -> str:
    """The first ``limit`` items joined by ``sep``, then ``(N more)`` if there are more.

    Parameters
    ----------
    items : iterable
        Items to list (each passed through ``str``).
    limit : int
        Most items shown.
    sep : str
        Separator between the items shown.

    Returns
    -------
    str
        The listing.
    """
    items = list(items)
    shown = sep.join(str(i) for i in items[:limit])
    return shown + (f" ({len(items) - limit} more)" if len(items) > limit else "")


class EnergyError(Exception):
    """Base of every expected failure in :mod:`energy`; its message is one capped line."""

    def __init__(self, message="", *args):
        super().__init__(one_line(message), *args)

    def __str__(self) -> str:
        return str(self.args[0]) if self.args else ""

    def __reduce__(self):
        """Pickle as (class, message, attributes): subclasses take other constructor arguments,
        and worker processes send their errors back pickled."""
        return _rebuild, (type(self), self.args, self.__dict__)


def _rebuild(cls, args, attributes):
    error = cls.__new__(cls)
    Exception.__init__(error, *args)
    error.__dict__.update(attributes)
    return error


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
        counts = ", ".join(f"{len(entries)} {kind}" for kind, entries in missing.items())
        head = f"missing parameters for {counts} type combination(s): "
        hint = ". Add them to a parameter/stream file and pass it with --params."
        # one example of every kind first, then the second of every kind, ...
        columns = [[f"{kind} {'-'.join(types)} (e.g. {example})"[:FIELD_CAP] for types, example in entries]
                   for kind, entries in missing.items()]
        examples = [col[k] for k in range(max(map(len, columns), default=0)) for col in columns if k < len(col)]
        shown: list[str] = []
        for text in examples:
            rest = len(examples) - len(shown) - 1
            tail = f" ({rest} more)" if rest else ""
            if len(head) + len("; ".join(shown + [text])) + len(tail) + len(hint) > MESSAGE_CAP:
                break
            shown.append(text)
        rest = len(examples) - len(shown)
        super().__init__(head + "; ".join(shown) + (f" ({rest} more)" if rest else "") + hint)


class UnsupportedForceError(StructureFileError):
    """An OpenMM ``System`` holds a force (or a form of one) the engine has no term for.

    ``force_class`` names the OpenMM class (``GBSAOBCForce``, ``CustomCompoundBondForce``, ...).
    """

    def __init__(self, path, force_class: str, message: str):
        super().__init__(path, message)
        self.force_class = force_class


class InputMismatchError(EnergyError, ValueError):
    """Two inputs that must describe the same atoms disagree (count, names, order)."""


class UnknownResidueError(EnergyError, ValueError):
    """The built-in force field has no template for one or more residues."""


class SettingsError(EnergyError, ValueError):
    """An invalid combination of computation settings."""


class SelectionError(EnergyError, ValueError):
    """An atom selection string is invalid or selects nothing."""


class GeometryError(EnergyError, ValueError):
    """Coordinates or a unit cell no energy can be computed for (coincident atoms, a degenerate
    cell, coordinates out of bounds, a residue spread over the system)."""


class NonFiniteEnergyError(EnergyError, ArithmeticError):
    """A computed energy is not finite although the inputs passed every check: a bug to report.

    ``term`` names the energy term and ``where`` the first interaction that produced it.
    """

    def __init__(self, term: str, where: str):
        self.term, self.where = term, where
        super().__init__(f"the {term} energy is not finite ({where}) although the inputs passed "
                         "every check: this is a bug, please report it with the input files")
