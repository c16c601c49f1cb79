"""The term registry: the one place that says which energy terms exist.

Each :class:`Term` has a name (the key in results, JSON and CSV), a short label (term bars,
column titles), a long label (menus, legends), whether it is bonded, and for bonded terms the
tables it is evaluated on (:class:`TableForm`: a :class:`~energy.model.system.MolecularSystem`
table and the function that gives one energy per row of it).

Everything that lists terms reads this registry when it runs, not when it is imported: the
pipeline, the decomposition, the JSON/CSV writers and summaries, the window's term bars, atom
table and map quantities.  :data:`TERMS`, :data:`BONDED_TERMS` and :data:`NONBONDED_TERMS` are
live views of the names in report order (bonded first).

Adding a bonded term (DEVELOPERS.md, "Adding an energy term"): write its energy function in a
module of :mod:`energy.terms`, then :func:`register` a :class:`Term` whose table the loaders
fill (``MolecularSystem(..., other_tables={attr: TermTable(...)})``).  A nonbonded term also
needs the residue-row kernel (or, like the implicit-solvent terms, its own module called by the
pipeline: :mod:`energy.terms.solvation`) to produce it, so it is not added through the registry
alone.
"""
from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from energy.model.system import TABLE_SHAPES, TermTable
from energy.terms import bonded, cmap

#: A bonded energy function: ``(table, positions, box, system) -> (n,) float64`` kcal/mol,
#: one energy per row of ``table``; ``positions`` (n_atoms, 3) A; ``box`` the frame's cell or
#: None; ``system`` the whole :class:`~energy.model.system.MolecularSystem` (for shared data
#: such as CMAP grids).
EnergyFunction = Callable[..., np.ndarray]


@dataclass(frozen=True)
class TableForm:
    """One table of a bonded term and the function that evaluates it.

    ``attr``: the system's table name (``bonds``, ``angles``...); ``width``: atoms per row;
    ``columns``: its parameter columns; ``energies``: an :data:`EnergyFunction`.
    """

    attr: str
    width: int
    columns: tuple
    energies: EnergyFunction


@dataclass(frozen=True)
class Term:
    """An energy term: ``name`` (result key), ``short_label``, ``long_label``, ``bonded``, and
    the ``tables`` it is evaluated on (bonded terms only; empty for nonbonded ones)."""

    name: str
    short_label: str
    long_label: str
    bonded: bool
    tables: tuple = ()

    def __post_init__(self):
        if not self.name.isidentifier():
            raise ValueError(f"term name {self.name!r} must be an identifier")
        if self.bonded and not self.tables:
            raise ValueError(f"bonded term {self.name!r} needs at least one table")


def _plain(func):
    """Adapt ``func(table, positions, box)`` to the registry's signature."""
    def energies(table, positions, box, system):
        return func(table, positions, box)
    energies.__name__ = func.__name__
    energies.__doc__ = func.__doc__
    return energies


def _cmap_energies(table, positions, box, system):
    return cmap.cmap_energies(table, system.cmap_maps, positions, box)


def _builtin_table(attr: str, energies) -> TableForm:
    width, columns = TABLE_SHAPES[attr]
    return TableForm(attr, width, columns, energies)


_BUILTIN = (
    Term("bond", "bond", "Bond", True, (_builtin_table("bonds", _plain(bonded.bond_energies)),)),
    Term("urey_bradley", "UB", "Urey-Bradley", True,
         (_builtin_table("urey_bradley", _plain(bonded.urey_bradley_energies)),)),
    Term("angle", "angle", "Angle", True, (_builtin_table("angles", _plain(bonded.angle_energies)),)),
    Term("dihedral", "dihed", "Dihedral", True,
         (_builtin_table("dihedrals", _plain(bonded.periodic_torsion_energies)),)),
    Term("improper", "impr", "Improper", True,
         (_builtin_table("impropers", _plain(bonded.harmonic_improper_energies)),
          _builtin_table("periodic_impropers", _plain(bonded.periodic_torsion_energies)))),
    Term("cmap", "CMAP", "CMAP", True, (_builtin_table("cmap", _cmap_energies),)),
    Term("coulomb", "Coulomb", "Coulomb", False),
    Term("lj", "LJ", "Lennard-Jones 12-6", False),
    # Implicit solvent (energy.terms.solvation): zero unless EnergySettings.implicit_solvent is set.
    Term("solvation_polar", "GB", "Polar solvation (generalized Born)", False),
    Term("solvation_nonpolar", "SA", "Nonpolar solvation (ACE)", False),
)

_terms: list[Term] = list(_BUILTIN)

#: Labels of the derived quantities every result also has.
_DERIVED = {"total": ("total", "Total"), "bonded": ("bonded", "Bonded (all bonded terms)"),
            "nonbonded": ("nonbonded", "Nonbonded (Coulomb + LJ)"),
            "effective_electrostatics": ("eff. elec", "Effective electrostatics (Coulomb + polar solvation)")}
#: Derived quantities that are sums of terms (the residue-pair tables compute them on request).
DERIVED_SUMS = {"nonbonded": ("coulomb", "lj"), "effective_electrostatics": ("coulomb", "solvation_polar")}


def register(term: Term) -> Term:
    """Add ``term`` (a bonded term goes after the last bonded one, keeping report order).

    Parameters
    ----------
    term : Term
        A bonded term whose tables no other term uses.

    Returns
    -------
    Term
        ``term`` itself.

    Raises
    ------
    ValueError
        If a term of that name, or a table of that name, is already registered, or the term is
        nonbonded (the kernel computes the nonbonded terms).
    """
    if any(t.name == term.name for t in _terms) or term.name in _DERIVED:
        raise ValueError(f"a term named {term.name!r} is already registered")
    if not term.bonded:
        raise ValueError("nonbonded terms come from the residue-row kernel; extend it instead")
    taken = {f.attr for t in _terms for f in t.tables}
    clash = [f.attr for f in term.tables if f.attr in taken]
    if clash:
        raise ValueError(f"table {clash[0]!r} already belongs to another term")
    last_bonded = max(k for k, t in enumerate(_terms) if t.bonded)
    _terms.insert(last_bonded + 1, term)
    return term


def unregister(name: str) -> None:
    """Remove a term added with :func:`register` (the built-in terms stay).

    Parameters
    ----------
    name : str
        Name of the term; a name no term has is ignored.

    Raises
    ------
    ValueError
        If ``name`` is a built-in term.
    """
    if name in {t.name for t in _BUILTIN}:
        raise ValueError(f"{name!r} is a built-in term")
    _terms[:] = [t for t in _terms if t.name != name]


def terms() -> tuple:
    """Every registered :class:`Term`, in report order.

    Returns
    -------
    tuple of Term
        Bonded terms first, then ``coulomb``, ``lj``, ``solvation_polar``, ``solvation_nonpolar``.
    """
    return tuple(_terms)


def term(name: str) -> Term:
    """The :class:`Term` called ``name``.

    Parameters
    ----------
    name : str
        Term name (result key), e.g. ``"angle"``.

    Returns
    -------
    Term
        The registered term.

    Raises
    ------
    KeyError
        If no term has that name; the message lists the names there are.
    """
    for t in _terms:
        if t.name == name:
            return t
    raise KeyError(f"no term {name!r}; terms: {', '.join(t.name for t in _terms)}")


def bonded_tables() -> tuple:
    """``(term name, TableForm)`` of every bonded table, in report order.

    Returns
    -------
    tuple of (str, TableForm)
        One entry per table (a term with two tables, such as ``improper``, gives two).
    """
    return tuple((t.name, f) for t in _terms for f in t.tables)


def table_form(attr: str) -> TableForm | None:
    """The :class:`TableForm` of the system table ``attr``, or None if no term uses it.

    Parameters
    ----------
    attr : str
        System table name, e.g. ``"bonds"``.

    Returns
    -------
    TableForm or None
        The form that evaluates that table.
    """
    for t in _terms:
        for f in t.tables:
            if f.attr == attr:
                return f
    return None


def table_of(system, form: TableForm) -> TermTable:
    """The system's table for ``form`` (an empty one when the system has none of it).

    Parameters
    ----------
    system : MolecularSystem
        The system.
    form : TableForm
        A registered table form.

    Returns
    -------
    TermTable
        ``system.table(form.attr)``, or an empty (0, ``form.width``) table with ``form.columns``.
    """
    table = system.table(form.attr)
    return TermTable.empty(form.width, *form.columns) if table is None else table


def short_label(name: str) -> str:
    """Short label of a term or of ``total``/``bonded``/``nonbonded``.

    Unknown names are returned as they are (a label is never a reason to fail).

    Parameters
    ----------
    name : str
        Term name or ``total``, ``bonded``, ``nonbonded``.

    Returns
    -------
    str
        The short label (term bars, column titles), or ``name``.
    """
    if name in _DERIVED:
        return _DERIVED[name][0]
    return next((t.short_label for t in _terms if t.name == name), name)


def long_label(name: str) -> str:
    """Long label of a term or of ``total``/``bonded``/``nonbonded`` (see :func:`short_label`).

    Parameters
    ----------
    name : str
        Term name or ``total``, ``bonded``, ``nonbonded``.

    Returns
    -------
    str
        The long label (menus, legends), or ``name`` when unknown.
    """
    if name in _DERIVED:
        return _DERIVED[name][1]
    return next((t.long_label for t in _terms if t.name == name), name)


def map_quantities() -> dict:
    """Quantity key -> long label of every quantity a residue-pair map can show.

    The total, the nonbonded and bonded sums, the effective electrostatics (Coulomb + polar
    solvation) and each term (read from the registry when called).

    Returns
    -------
    dict of str to str
        In the order ``total``, ``nonbonded``, ``effective_electrostatics``, the nonbonded terms,
        ``bonded``, the bonded terms.
    """
    out = {"total": long_label("total"), "nonbonded": long_label("nonbonded"),
           "effective_electrostatics": long_label("effective_electrostatics")}
    out.update({name: long_label(name) for name in NONBONDED_TERMS})
    out["bonded"] = long_label("bonded")
    out.update({name: long_label(name) for name in BONDED_TERMS})
    return out


class TermNames(Sequence):
    """A live, read-only view of the registered term names (optionally only bonded or only
    nonbonded ones), in report order.  Behaves like a tuple: iterate, index, slice,
    ``len``, ``in``, ``+`` with a tuple, ``==`` with a tuple."""

    def __init__(self, bonded: bool | None = None, extra: tuple = (), prefix: tuple = ()):
        self._bonded = bonded
        self._extra = tuple(extra)
        self._prefix = tuple(prefix)

    def _names(self) -> tuple:
        return self._prefix + tuple(t.name for t in _terms
                                    if self._bonded is None or t.bonded == self._bonded) + self._extra

    def __getitem__(self, index):
        return self._names()[index]

    def __len__(self) -> int:
        return len(self._names())

    def __iter__(self):
        return iter(self._names())

    def __contains__(self, name) -> bool:
        return name in self._names()

    def index(self, name, *args) -> int:
        """Position of ``name`` in the view (like ``tuple.index``).

        Parameters
        ----------
        name : str
            A term name (or an extra name such as ``total``).
        *args : int
            Optional ``start`` and ``stop``, as for ``tuple.index``.

        Returns
        -------
        int
            Index of the first occurrence.

        Raises
        ------
        ValueError
            If ``name`` is not in the view.
        """
        return self._names().index(name, *args)

    def __add__(self, other):
        return self._names() + tuple(other)

    def __radd__(self, other):
        return tuple(other) + self._names()

    def __eq__(self, other):
        return self._names() == tuple(other) if isinstance(other, Sequence) else NotImplemented

    __hash__ = None

    def __repr__(self) -> str:
        return repr(self._names())


#: Every term name in report order (live).
TERMS = TermNames()
#: Every term name and ``total``: the value columns of per-frame and per-pair tables (live).
COLUMNS = TermNames(extra=("total",))
#: Bonded term names (live).
BONDED_TERMS = TermNames(bonded=True)
#: Nonbonded term names (live): ``coulomb``, ``lj``, ``solvation_polar``, ``solvation_nonpolar``.
NONBONDED_TERMS = TermNames(bonded=False)
