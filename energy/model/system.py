"""The engine's own description of a parameterised molecular system (struct of arrays).

A :class:`MolecularSystem` is what every loader (PSF + CHARMM-style parameters, or a PDB/mmCIF
through the built-in force field) produces, and all the energy code consumes.  It holds no
coordinates: those come per frame as a :class:`Frame`.

Units: angstrom, kcal/mol, elementary charge, radians.  Functional forms are documented in
``docs/physics.md``; force constants are stored in the form ``E = K (x - x0)^2`` (no 1/2).
"""
from __future__ import annotations

from dataclasses import dataclass, field, fields

import numpy as np

from energy.model.residue_classes import residue_classes

#: The bonded tables every system has: name -> (atoms per row, parameter columns).  Terms added
#: through the registry bring their own tables in ``MolecularSystem.other_tables``.
TABLE_SHAPES = {
    "bonds": (2, ("k", "r0")),
    "urey_bradley": (3, ("k", "s0")),
    "angles": (3, ("k", "theta0")),
    "dihedrals": (4, ("k", "periodicity", "phase")),
    "impropers": (4, ("k", "psi0")),
    "periodic_impropers": (4, ("k", "periodicity", "phase")),
    "cmap": (8, ("map",)),
}


def _frozen_array(value, dtype, shape_tail=None, name="array"):
    arr = np.ascontiguousarray(value, dtype=dtype)
    if shape_tail is not None:
        if arr.size == 0:
            arr = arr.reshape((0,) + tuple(shape_tail))
        if arr.shape[1:] != tuple(shape_tail):
            raise ValueError(f"{name}: shape {arr.shape}, expected (n, {', '.join(map(str, shape_tail))})")
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True)
class TermTable:
    """One kind of bonded term: atom indices plus parameter columns, row-aligned.

    ``atoms`` is (n, k) intp.  ``params`` maps a column name to an (n,) float64 array, e.g.
    ``{"k": ..., "r0": ...}`` for bonds.  Units: kcal/mol, angstrom, radians.
    """

    atoms: np.ndarray
    params: dict

    def __post_init__(self):
        atoms = np.asarray(self.atoms)
        width = atoms.shape[1] if atoms.ndim == 2 else 0
        object.__setattr__(self, "atoms", _frozen_array(atoms, np.intp, (width,), "atoms"))
        n = len(self.atoms)
        frozen = {}
        for key, col in self.params.items():
            arr = _frozen_array(col, np.float64 if key != "periodicity" and key != "map" else np.intp)
            if arr.shape != (n,):
                raise ValueError(f"term column {key!r}: shape {arr.shape}, expected ({n},)")
            frozen[key] = arr
        object.__setattr__(self, "params", frozen)

    def __len__(self) -> int:
        return len(self.atoms)

    @classmethod
    def empty(cls, width: int, *columns: str) -> TermTable:
        """A table with no rows.

        Parameters
        ----------
        width : int
            Atoms per row.
        *columns : str
            Names of its parameter columns.

        Returns
        -------
        TermTable
            ``atoms`` (0, width) intp and one (0,) column per name.
        """
        return cls(np.zeros((0, width), np.intp), {c: np.zeros(0) for c in columns})


@dataclass(frozen=True)
class ResidueTable:
    """Per-residue labels, all (n_residues,) arrays.

    ``chain`` is the chain identifier (PDB chain or PSF segment id), ``resid`` the residue
    number as in the file, ``icode`` the insertion code ('' if none).
    """

    chain: np.ndarray
    resid: np.ndarray
    resname: np.ndarray
    icode: np.ndarray

    def __post_init__(self):
        n = len(self.resid)
        for f in fields(self):
            arr = np.asarray(getattr(self, f.name))
            if f.name == "resid":
                arr = _frozen_array(arr, np.int64)
            else:
                arr = _frozen_array(arr.astype(str), object)
            if arr.shape != (n,):
                raise ValueError(f"residues.{f.name}: shape {arr.shape}, expected ({n},)")
            object.__setattr__(self, f.name, arr)

    def __len__(self) -> int:
        return len(self.resid)

    def label(self, i: int) -> str:
        """``A:LYS12`` style label of residue ``i``.

        Parameters
        ----------
        i : int
            Residue index (0-based).

        Returns
        -------
        str
            Chain (omitted when blank), residue name, number and insertion code.
        """
        chain = str(self.chain[i]).strip()
        return f"{chain + ':' if chain else ''}{self.resname[i]}{self.resid[i]}{self.icode[i]}"


@dataclass(frozen=True)
class MolecularSystem:
    """A parameterised system: topology, per-atom parameters and every bonded term.

    Per-atom arrays (all (n_atoms,)):
      ``names``, ``types`` (force-field atom types), ``elements``, ``charges`` (e),
      ``resindex`` (atom -> residue, 0-based), ``lj_type`` (index into the LJ tables).
    Lennard-Jones: ``lj_rmin`` and ``lj_eps`` are (n_lj_types, n_lj_types) tables of the pair
      Rmin_ij (A) and well depth eps_ij (kcal/mol, >= 0), with combination rules and NBFIX
      already applied by the loader.
    Exceptions (``exception_pairs`` (m, 2), i < j): atom pairs removed from the ordinary
      nonbonded sum (1-2, 1-3 and 1-4 pairs).  Each carries its own interaction, evaluated with
      plain Coulomb and plain LJ: ``exception_qq`` (e^2, scaling included), ``exception_rmin``
      (A) and ``exception_eps`` (kcal/mol).  1-2 and 1-3 pairs carry zeros.
    Bonded tables (:class:`TermTable`): ``bonds`` (k, r0), ``urey_bradley`` (k, s0; atoms are
      the angle triplet, distance between the outer two), ``angles`` (k, theta0),
      ``dihedrals`` (k, periodicity, phase), ``impropers`` (harmonic: k, psi0),
      ``periodic_impropers`` (k, periodicity, phase), ``cmap`` (map; atoms are the 8 atoms of the
      phi and psi dihedrals).  ``virtual_sites``: sites placed from parent atoms in every frame
      (their interactions count toward their residue, the parent's).  ``cmap_maps`` is a tuple
      of (n, n) grids, kcal/mol, with
      ``grid[i, j]`` the energy at phi = -180 + i*360/n, psi = -180 + j*360/n degrees.
    """

    names: np.ndarray
    types: np.ndarray
    elements: np.ndarray
    charges: np.ndarray
    resindex: np.ndarray
    residues: ResidueTable
    lj_type: np.ndarray
    lj_rmin: np.ndarray
    lj_eps: np.ndarray
    exception_pairs: np.ndarray
    exception_qq: np.ndarray
    exception_rmin: np.ndarray
    exception_eps: np.ndarray
    bonds: TermTable | None = None
    urey_bradley: TermTable | None = None
    angles: TermTable | None = None
    dihedrals: TermTable | None = None
    impropers: TermTable | None = None
    periodic_impropers: TermTable | None = None
    cmap: TermTable | None = None
    cmap_maps: tuple = ()
    force_field: str = ""
    source_files: tuple = ()
    segids: np.ndarray | None = field(default=None)
    #: Tables of terms added through :func:`energy.terms.registry.register` (name -> TermTable).
    other_tables: dict = field(default_factory=dict)
    #: Massless interaction sites placed from parent atoms in every frame
    #: (:class:`energy.model.virtual_sites.VirtualSites`), or None.
    virtual_sites: object = None
    #: One-line notes of the loader (e.g. restraint forces of an OpenMM system left out).
    notes: tuple = ()
    #: Generalized Born intrinsic radii (A) and screening factors stored in the topology (an
    #: Amber prmtop's RADII and SCREEN columns), (n_atoms,) float64 each, or None: the
    #: per-element sets are used (docs/physics.md, "Implicit solvent").
    topology_gb_radius: np.ndarray | None = None
    topology_gb_screen: np.ndarray | None = None

    def __post_init__(self):
        n = len(self.names)
        set_ = lambda k, v: object.__setattr__(self, k, v)  # noqa: E731
        for key in ("names", "types", "elements"):
            set_(key, _frozen_array(np.asarray(getattr(self, key)).astype(str), object))
        set_("charges", _frozen_array(self.charges, np.float64))
        set_("resindex", _frozen_array(self.resindex, np.intp))
        set_("lj_type", _frozen_array(self.lj_type, np.intp))
        for key in ("names", "types", "elements", "charges", "resindex", "lj_type"):
            if getattr(self, key).shape != (n,):
                raise ValueError(f"{key}: shape {getattr(self, key).shape}, expected ({n},)")
        nt = int(self.lj_type.max()) + 1 if n else 0
        for key in ("lj_rmin", "lj_eps"):
            arr = _frozen_array(getattr(self, key), np.float64)
            if arr.ndim != 2 or arr.shape[0] < nt or arr.shape[0] != arr.shape[1]:
                raise ValueError(f"{key}: shape {arr.shape}, expected a square table of >= {nt} types")
            set_(key, arr)
        pairs = _frozen_array(self.exception_pairs, np.intp, (2,), "exception_pairs")
        if len(pairs) and np.any(pairs[:, 0] >= pairs[:, 1]):
            raise ValueError("exception_pairs must have i < j in every row")
        set_("exception_pairs", pairs)
        for key in ("exception_qq", "exception_rmin", "exception_eps"):
            arr = _frozen_array(getattr(self, key), np.float64)
            if arr.shape != (len(pairs),):
                raise ValueError(f"{key}: shape {arr.shape}, expected ({len(pairs)},)")
            set_(key, arr)
        if n and (self.resindex.min() < 0 or self.resindex.max() >= len(self.residues)):
            raise ValueError("resindex points outside the residue table")
        set_("cmap_maps", tuple(_frozen_array(m, np.float64) for m in self.cmap_maps))
        if self.segids is not None:
            set_("segids", _frozen_array(np.asarray(self.segids).astype(str), object))
        for attr, (width, columns) in TABLE_SHAPES.items():  # a table not given is empty
            if getattr(self, attr) is None:
                set_(attr, TermTable.empty(width, *columns))
        for attr, table in self.other_tables.items():
            if attr in TABLE_SHAPES or not isinstance(table, TermTable):
                raise ValueError(f"other_tables[{attr!r}]: a TermTable of a registered term's own table")
        set_("other_tables", dict(self.other_tables))
        set_("notes", tuple(str(n) for n in self.notes))
        for key in ("topology_gb_radius", "topology_gb_screen"):
            if getattr(self, key) is not None:
                set_(key, _frozen_array(getattr(self, key), np.float64))
                if getattr(self, key).shape != (n,):
                    raise ValueError(f"{key}: shape {getattr(self, key).shape}, expected ({n},)")
        sites = self.virtual_sites
        if sites is not None and len(sites) and (sites.site.max() >= n or sites.parents.max() >= n):
            raise ValueError("virtual_sites: a site or parent index outside the atoms")

    def table(self, attr: str) -> TermTable | None:
        """The bonded table ``attr``: a field such as ``bonds``, or one of ``other_tables``.

        Parameters
        ----------
        attr : str
            Table name.

        Returns
        -------
        TermTable or None
            None when this system has no such table (:func:`energy.terms.registry.table_of` gives an
            empty table then).
        """
        if attr in TABLE_SHAPES:
            return getattr(self, attr)
        return self.other_tables.get(attr)

    def atom_label(self, i: int) -> str:
        """``A:ALA25 CB``: the one label format of an atom (residue label, a space, atom name).

        Parameters
        ----------
        i : int
            Atom index (0-based).

        Returns
        -------
        str
            Chain (omitted when blank), residue name, number and insertion code, then the atom name.
        """
        return f"{self.residues.label(int(self.resindex[i]))} {self.names[i]}"

    @property
    def n_atoms(self) -> int:
        return len(self.names)

    @property
    def n_residues(self) -> int:
        return len(self.residues)

    def derived(self, key: str, build):
        """A value computed once from this (frozen) system by ``build(self)`` and kept.

        Topology data that every frame would otherwise rebuild (exclusion lists, atom order by residue).

        Parameters
        ----------
        key : str
            Name of the value.
        build : callable
            ``build(system)``, called only the first time ``key`` is asked for.

        Returns
        -------
        object
            The kept value.
        """
        cache = self.__dict__.setdefault("_derived", {})
        if key not in cache:
            cache[key] = build(self)
        return cache[key]

    @property
    def residue_classes(self) -> np.ndarray:
        """(n_residues,) str: each residue's class (:data:`energy.model.residue_classes.CLASSES`),
        from its name, or its segment for a name the class table does not know (computed once)."""
        return self.derived("residue_classes", lambda s: residue_classes(s.residues))

    @property
    def is_heavy(self) -> np.ndarray:
        """(n_atoms,) bool: True for every atom that is not hydrogen (computed once)."""
        def build(system):
            heavy = ~np.isin(np.char.upper(system.elements.astype(str)), ["H", "D"])
            heavy.flags.writeable = False
            return heavy
        return self.derived("is_heavy", build)

    def term_counts(self) -> dict[str, int]:
        """Interactions per bonded table, and the number of exception pairs.

        Harmonic and periodic impropers are counted together as ``impropers``.

        Returns
        -------
        dict of str to int
            Table name -> rows, plus ``exceptions``.
        """
        counts = {}
        for attr in (*TABLE_SHAPES, *self.other_tables):
            key = "impropers" if attr == "periodic_impropers" else attr
            counts[key] = counts.get(key, 0) + len(self.table(attr))
        counts["exceptions"] = len(self.exception_pairs)
        return counts


@dataclass(frozen=True)
class Frame:
    """Coordinates of one conformation.

    ``positions`` (n_atoms, 3) float64 in A; ``box`` is ``None`` (not periodic) or the unit cell
    as MDAnalysis gives it, ``[a, b, c, alpha, beta, gamma]`` (A, degrees); all-zero edges mean
    no cell.  Nothing here checks the values: every computation passes the frame through
    :func:`energy.io.validation.check_frame` first.  ``index`` is the
    frame number in its trajectory (0 for a single structure).
    """

    positions: np.ndarray
    box: np.ndarray | None = None
    index: int = 0
    source: str = ""

    def __post_init__(self):
        pos = _frozen_array(self.positions, np.float64, (3,), "positions")
        object.__setattr__(self, "positions", pos)
        if self.box is not None:
            box = np.asarray(self.box, dtype=np.float64)
            if box.shape != (6,) or np.all(box[:3] == 0):
                box = None  # MDAnalysis reports "no box" as zeros
            else:  # kept as given: energy.io.validation.check_cell refuses a cell that is no cell
                box = _frozen_array(box, np.float64)
            object.__setattr__(self, "box", box)

    @property
    def is_orthorhombic(self) -> bool:
        return self.box is not None and bool(np.allclose(self.box[3:], 90.0))
