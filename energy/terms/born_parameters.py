"""Per-atom parameters of the generalized Born models: intrinsic radii, screening factors and,
for GBn2, the per-atom tanh coefficients and the neck-integral tables.

The radii and factors are assigned per element (and a few bonded-partner rules) from the
published sets; docs/physics.md, "Implicit solvent", lists them with their sources.  They are
the sets OpenMM 8.6 assigns for ``implicit/obc2.xml`` and ``implicit/gbn2.xml`` (checked atom
by atom in tests/test_solvation_vs_openmm.py), and the same rules serve PSF input.  An Amber
topology's stored radii (and, for OBC2, screening factors) take their place on that route.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from energy.errors import SettingsError
from energy.model.system import MolecularSystem

#: Offset subtracted from the intrinsic radius before the descreening integral, A:
#: OBC (Onufriev, Bashford & Case 2004) 0.09 A; GBn2 (Nguyen, Roe & Simmerling 2013) 0.195141 A.
OFFSETS = {"obc2": 0.09, "gbn2": 0.195141}
#: tanh rescaling of OBC model II (Onufriev, Bashford & Case 2004, Table 1): alpha, beta, gamma.
OBC2_TANH = (1.0, 0.8, 4.85)
#: GBn2 neck scaling and the distance past R_i + R_j where the neck term stops, A (the value in
#: OpenMM 8.6's GBSAGBn2Force, 0.68 nm).
GBN2_NECK_SCALE = 0.826836
GBN2_NECK_CUT = 6.8
#: The radii the GBn2 neck tables cover, A (Mongan et al. 2007's grid; OpenMM refuses others).
GBN2_RADIUS_RANGE = (1.0, 2.0)

#: mbondi2 radii, A (Onufriev, Bashford & Case 2004; Bondi 1964 with H on N at 1.3 A);
#: elements not listed get 1.5 A.
_MBONDI2 = {"C": 1.7, "N": 1.55, "O": 1.5, "F": 1.5, "Si": 2.1, "P": 1.85, "S": 1.8, "Cl": 1.7}
_DEFAULT_RADIUS = 1.5
#: HCT screening factors (Hawkins, Cramer & Truhlar 1996, the set Amber's OBC models use).
_SCREEN_OBC = {"H": 0.85, "C": 0.72, "N": 0.79, "O": 0.85, "F": 0.88, "P": 0.86, "S": 0.96}
_SCREEN_OBC_DEFAULT = 0.8
#: GBn2 screening factors (Nguyen, Roe & Simmerling 2013), proteins and nucleic acids.
_SCREEN_GBN2 = {"H": 1.425952, "C": 1.058554, "N": 0.733599, "O": 1.061039, "S": -0.703469,
                "F": 0.5, "P": 0.5}
_SCREEN_GBN2_NUCLEIC = {"H": 1.696538, "C": 1.268902, "N": 1.4259728, "O": 0.1840098, "S": 0.05,
                        "F": 0.5, "P": 1.5450597}
_SCREEN_GBN2_DEFAULT = 0.5
#: GBn2 per-element (alpha, beta, gamma) (Nguyen, Roe & Simmerling 2013).
_TANH_GBN2 = {"H": (0.788440, 0.798699, 0.437334), "C": (0.733756, 0.506378, 0.205844),
              "N": (0.503364, 0.316828, 0.192915), "O": (0.867814, 0.876635, 0.387882),
              "S": (0.867814, 0.876635, 0.387882)}
_TANH_GBN2_NUCLEIC = {"H": (0.537050, 0.362861, 0.116704), "C": (0.331670, 0.196842, 0.093422),
                      "N": (0.686311, 0.463189, 0.138722), "O": (0.606344, 0.463006, 0.142262),
                      "S": (0.606344, 0.463006, 0.142262), "P": (0.418365, 0.290054, 0.1064245)}
_TANH_GBN2_DEFAULT = (1.0, 0.8, 4.851)
_NUCLEIC_RESIDUES = frozenset({"A", "C", "G", "U", "DA", "DC", "DG", "DT"})


@dataclass(frozen=True)
class BornParameters:
    """Per-atom parameters of one GB model (struct of arrays, system atom order).

    ``radius`` (n,) intrinsic radius R, A; ``offset`` A (rho = R - offset); ``screen`` (n,)
    screening factor; ``alpha``, ``beta``, ``gamma`` (n,) tanh coefficients; ``neck_index``
    (n,) int64 row of the atom's radius in the (k, k) neck tables ``neck_m0`` (1/A) and
    ``neck_d0`` (A); ``neck_scale`` 0 for OBC2 (no neck term).
    """

    model: str
    radius: np.ndarray
    offset: float
    screen: np.ndarray
    alpha: np.ndarray
    beta: np.ndarray
    gamma: np.ndarray
    neck_index: np.ndarray
    neck_m0: np.ndarray
    neck_d0: np.ndarray
    neck_scale: float

    @property
    def rho(self) -> np.ndarray:
        """(n,) float64 offset radius rho = R - offset, A."""
        return self.radius - self.offset

    @property
    def scaled_rho(self) -> np.ndarray:
        """(n,) float64 screened offset radius s * rho, A."""
        return self.screen * self.rho


def _bonded_partners(system: MolecularSystem) -> list:
    partners = [[] for _ in range(system.n_atoms)]
    if system.bonds is not None:
        for a, b in np.asarray(system.bonds.atoms):
            partners[int(a)].append(int(b))
            partners[int(b)].append(int(a))
    return partners


def mbondi2_radii(system: MolecularSystem) -> np.ndarray:
    """mbondi2 intrinsic radii (Onufriev, Bashford & Case 2004): per element, H on N 1.3 A.

    Parameters
    ----------
    system : MolecularSystem
        Its ``elements`` and ``bonds`` table are used (an H with no bond gets 1.2 A).

    Returns
    -------
    (n_atoms,) float64
        Radii, A.
    """
    partners = _bonded_partners(system)
    elements = [str(e) for e in system.elements]
    out = np.empty(system.n_atoms)
    for i, el in enumerate(elements):
        if el in ("H", "D"):
            out[i] = 1.3 if partners[i] and elements[partners[i][0]] == "N" else 1.2
        else:
            out[i] = _MBONDI2.get(el, _DEFAULT_RADIUS)
    return out


def _is_carboxylate_oxygen(i: int, elements, partners) -> bool:
    if elements[i] != "O" or len(partners[i]) != 1:
        return False
    c = partners[i][0]
    if elements[c] != "C" or len(partners[c]) != 3:
        return False
    return any(elements[k] == "O" for k in partners[c] if k != i)


def mbondi3_radii(system: MolecularSystem) -> np.ndarray:
    """mbondi3 radii (Nguyen, Roe & Simmerling 2013): mbondi2, carboxylate O 1.4 A, Arg HH*/HE 1.17 A.

    Parameters
    ----------
    system : MolecularSystem
        Elements, bonds, atom and residue names are used.

    Returns
    -------
    (n_atoms,) float64
        Radii, A.
    """
    out = mbondi2_radii(system)
    partners = _bonded_partners(system)
    elements = [str(e) for e in system.elements]
    resname = np.asarray(system.residues.resname)[system.resindex]
    for i in range(system.n_atoms):
        if _is_carboxylate_oxygen(i, elements, partners):
            out[i] = 1.4
        elif resname[i] == "ARG" and (str(system.names[i]).startswith("HH") or str(system.names[i]).startswith("HE")):
            out[i] = 1.17
    return out


def _neck_tables_nm():
    """The 21 x 21 GBn neck tables (Mongan, Simmerling, McCammon, Case & Onufriev 2007) as
    OpenMM ships them (``openmm.app.internal.customgbforces.m0, d0``; nm and 1/nm), read from
    the library at run time."""
    from openmm.app.internal import customgbforces
    return (np.asarray(customgbforces.m0, np.float64).reshape(21, 21),
            np.asarray(customgbforces.d0, np.float64).reshape(21, 21))


def neck_tables(radius: np.ndarray):
    """Neck-integral tables for the distinct radii of ``radius`` (bilinear in the 1.0-2.0 A grid).

    Parameters
    ----------
    radius : (n,) float64
        Intrinsic radii, A.

    Returns
    -------
    index : (n,) int64
        Each atom's row in the tables.
    m0 : (k, k) float64
        Neck maximum, 1/A.
    d0 : (k, k) float64
        Distance of the maximum, A.
    """
    unique, index = np.unique(radius, return_inverse=True)
    m0_nm, d0_nm = _neck_tables_nm()
    pos = (unique - 1.0) * 20.0          # grid step 0.05 A from 1.0 A
    lo = np.clip(np.floor(pos), 0, 20).astype(np.int64)
    hi = np.minimum(lo + 1, 20)
    w_hi = np.where((pos > 0) & (pos < 20), pos - lo, 0.0)
    w_lo = 1.0 - w_hi
    lo = np.where(pos >= 20, 20, lo)

    def interpolate(table):
        return (w_lo[:, None] * w_lo[None, :] * table[lo][:, lo] + w_lo[:, None] * w_hi[None, :] * table[lo][:, hi]
                + w_hi[:, None] * w_lo[None, :] * table[hi][:, lo] + w_hi[:, None] * w_hi[None, :] * table[hi][:, hi])

    return index.astype(np.int64), interpolate(m0_nm) / 10.0, interpolate(d0_nm) * 10.0


def _per_element(elements, nucleic, table, nucleic_table, default):
    return np.array([(nucleic_table if n else table).get(e, default) for e, n in zip(elements, nucleic)],
                    dtype=np.float64)


def born_parameters(system: MolecularSystem, model: str) -> BornParameters:
    """The GB parameters of ``system`` for ``model`` (kept on the system once built).

    Parameters
    ----------
    system : MolecularSystem
        Elements, bonds, atom and residue names are read.  When it carries a topology's own
        radii (``topology_gb_radius``, an Amber prmtop), those replace the per-element radii, and
        for ``obc2`` its screening factors (``topology_gb_screen``) replace the HCT set.
    model : str
        ``obc2`` (mbondi2 radii, HCT screening, OBC II tanh) or ``gbn2`` (mbondi3 radii, GBn2
        screening and per-element tanh coefficients, neck tables).

    Returns
    -------
    BornParameters
        Per-atom arrays in system atom order (A, 1/A).

    Raises
    ------
    SettingsError
        For ``gbn2``, an intrinsic radius outside the neck tables' 1-2 A.
    """
    return system.derived(f"born_parameters_{model}", lambda s: _build(s, model))


def _build(system: MolecularSystem, model: str) -> BornParameters:
    elements = [str(e) for e in system.elements]
    n = system.n_atoms
    stored = system.topology_gb_radius is not None
    if model == "obc2":
        # an Amber topology's own radii and screening factors (as OpenMM's AmberPrmtopFile does)
        radius = system.topology_gb_radius.copy() if stored else mbondi2_radii(system)
        screen = (system.topology_gb_screen.copy() if stored else
                  np.array([_SCREEN_OBC.get(e, _SCREEN_OBC_DEFAULT) for e in elements], np.float64))
        a, b, g = (np.full(n, v) for v in OBC2_TANH)
        z = np.zeros((1, 1))
        return BornParameters(model, radius, OFFSETS[model], screen, a, b, g, np.zeros(n, np.int64),
                              z, z, 0.0)
    if model != "gbn2":
        raise ValueError(f"unknown GB model {model!r}")
    # GBn2 keeps its own screening factors even with a topology's radii (OpenMM's AmberPrmtopFile,
    # as sander and pmemd override the factors a topology stores for GBn and GBn2)
    radius = system.topology_gb_radius.copy() if stored else mbondi3_radii(system)
    outside = np.flatnonzero((radius < GBN2_RADIUS_RANGE[0]) | (radius > GBN2_RADIUS_RANGE[1]))
    if len(outside):
        where = f"{system.source_files[0]}: " if system.source_files else ""
        source = "the topology's stored radius" if stored else "its mbondi3 radius"
        raise SettingsError(f"{where}GBn2 needs intrinsic radii of {GBN2_RADIUS_RANGE[0]:g}-"
                            f"{GBN2_RADIUS_RANGE[1]:g} A (its neck tables); atom {int(outside[0]) + 1} "
                            f"({system.atom_label(int(outside[0]))}) has {source} {radius[outside[0]]:g} A"
                            f"{f' ({len(outside) - 1} more)' if len(outside) > 1 else ''}; use obc2")
    resname = np.asarray(system.residues.resname)[system.resindex]
    nucleic = [str(r) in _NUCLEIC_RESIDUES for r in resname]
    screen = _per_element(elements, nucleic, _SCREEN_GBN2, _SCREEN_GBN2_NUCLEIC, _SCREEN_GBN2_DEFAULT)
    tanh = np.array([(_TANH_GBN2_NUCLEIC if nu else _TANH_GBN2).get(e, _TANH_GBN2_DEFAULT)
                     for e, nu in zip(elements, nucleic)], np.float64).reshape(n, 3)
    index, m0, d0 = neck_tables(radius)
    return BornParameters(model, radius, OFFSETS[model], screen, tanh[:, 0].copy(), tanh[:, 1].copy(),
                          tanh[:, 2].copy(), index, m0, d0, GBN2_NECK_SCALE)
