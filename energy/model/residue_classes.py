"""Residue classes: protein, nucleic acid, water, ion, lipid, and ligand (everything else:
ligands, cofactors, buffer molecules, unknown residues).

Assigned from residue names as the trade uses them (the table ``resources/residue_classes.json``
says where the names come from), then, for a name the table does not know, from the PSF segment
(``SOLV``, ``WAT``... water; ``ION``, ``IONS``... ions).
"""
from __future__ import annotations

import numpy as np

import resources

#: Every class, in display order; ``ligand`` covers everything not in the others.
CLASSES = ("protein", "nucleic", "water", "ion", "lipid", "ligand")
#: Classes treated as solvent (aggregated into blocks in solvated systems).
SOLVENT_CLASSES = ("water", "ion")


def _tables():
    table = resources.json_table("residue_classes.json")
    exact = {name: cls for cls, names in table["classes"].items() for name in names}
    upper = {}
    for name, cls in exact.items():
        upper.setdefault(name.upper(), cls)
    segments = {name: cls for cls, names in table["segments"].items() for name in names}
    return exact, upper, segments


def residue_class(resname: str, segid: str = "") -> str:
    """The class of one residue name (and, for an unknown name, its PSF segment).

    Parameters
    ----------
    resname : str
        Residue name as in the file (``HOH``, ``NA``, ``Na+``, ``LYS``...).
    segid : str
        PSF segment or chain identifier (used only when the name is not in the table).

    Returns
    -------
    str
        One of :data:`CLASSES`.
    """
    exact, upper, segments = _tables()
    name = str(resname).strip()
    cls = exact.get(name) or upper.get(name.upper())
    if cls is None:
        cls = segments.get(str(segid).strip().upper(), "ligand")
    return cls


def residue_classes(residues, segids=None) -> np.ndarray:
    """Class of every residue of a :class:`~energy.model.system.ResidueTable`.

    Parameters
    ----------
    residues : ResidueTable
        The residues (names; chains stand in for segments when ``segids`` is None).
    segids : (n_residues,) str array, optional
        PSF segment of each residue.

    Returns
    -------
    (n_residues,) object array of str
        One of :data:`CLASSES` per residue.
    """
    segs = residues.chain if segids is None else segids
    memo: dict = {}
    out = np.empty(len(residues), dtype=object)
    for k, (name, seg) in enumerate(zip(residues.resname, segs)):
        key = (str(name), str(seg))
        if key not in memo:
            memo[key] = residue_class(*key)
        out[k] = memo[key]
    out.flags.writeable = False
    return out
