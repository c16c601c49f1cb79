"""One message for every residue the built-in force field cannot match, with the options that fix it.

Residues are named as the depositors number them, ``chain:name number insertion-code``
(``A:ILE181A``), grouped by name with a count (``HEM x9 (A:HEM201, A:HEM202, ...)``).  Each kind
of problem names the Tessera option that solves it, never the underlying library's API:

* no hydrogen atoms at all: ``--add-hydrogens`` (or ``--repair``);
* a 4-site water (an extra, massless site such as ``MW``): ``--repair`` removes the extra sites,
  so the waters become the force field's 3-site TIP3P;
* a modified residue with a known parent (selenomethionine MSE -> MET, ...): ``--repair``;
* a standard residue with missing or extra atoms: ``--repair`` (rebuilds missing heavy atoms and
  terminal groups, adds hydrogens);
* anything else (ligands, cofactors, buffer molecules, ions the force field lacks):
  ``--forcefield-file FILE.xml`` with its template, or ``--drop-unmatched``.

The list of residues in a message is capped at :data:`LIST_CHARACTERS` characters, ending with
``(n more)``.
"""
from __future__ import annotations

from energy.errors import MESSAGE_CAP

#: Longest residue listing in one message (characters); the rest is counted as "(n more)".
LIST_CHARACTERS = 300
WATER_NAMES = frozenset({"HOH", "WAT", "H2O", "SOL", "TIP", "TIP3", "TIP4", "T4P", "T4E", "DOD"})
#: Names that 4-site water models give their massless site.
VIRTUAL_SITE_NAMES = frozenset({"MW", "M", "EPW", "EP", "LP", "OM", "MW1", "EW"})


def residue_label(residue) -> str:
    """``chain:NAME<number><insertion code>`` of an OpenMM residue, e.g. ``A:ILE181A``.

    Parameters
    ----------
    residue : openmm.app.Residue

    Returns
    -------
    str
        The label (no ``chain:`` prefix when the chain id is blank).
    """
    chain = str(residue.chain.id).strip()
    icode = str(getattr(residue, "insertionCode", "") or "").strip()
    return f"{chain + ':' if chain else ''}{residue.name}{str(residue.id).strip()}{icode}"


def grouped_listing(residues, limit: int = LIST_CHARACTERS) -> str:
    """Residues grouped by name: ``NAME xN (label, label, ...), NAME2 xM (...)``.

    Groups come in order of first appearance, with at most ``limit`` characters of labels, the
    rest counted as ``(n more)``.

    Parameters
    ----------
    residues : iterable of openmm.app.Residue
    limit : int
        Most characters of labels (default :data:`LIST_CHARACTERS`).

    Returns
    -------
    str
    """
    groups = {}
    for r in residues:
        groups.setdefault(r.name, []).append(residue_label(r))
    parts, used, shown = [], 0, 0
    total = sum(len(v) for v in groups.values())
    for name, labels in groups.items():
        taken = []
        for label in labels:
            if used + len(label) + 2 > limit:
                break
            taken.append(label)
            used += len(label) + 2
        if not taken:
            break
        shown += len(taken)
        more = ", ..." if len(taken) < len(labels) else ""
        parts.append(f"{name} x{len(labels)} ({', '.join(taken)}{more})")
        if len(taken) < len(labels):
            break
    text = ", ".join(parts)
    return text + (f" ({total - shown} more)" if shown < total else "")


def is_four_site_water(residue) -> bool:
    """A water residue with a fourth, massless site (TIP4P-like).

    Parameters
    ----------
    residue : openmm.app.Residue

    Returns
    -------
    bool
    """
    if residue.name.upper() not in WATER_NAMES:
        return False
    atoms = list(residue.atoms())
    return len(atoms) == 4 and any(a.element is None or a.name.upper() in VIRTUAL_SITE_NAMES
                                   for a in atoms)


def unmatched_message(unmatched, *, has_hydrogens: bool, add_hydrogens: bool, repair: bool,
                      standard_names, modified_parents: dict, force_field_label: str, gaps=(),
                      budget: int = MESSAGE_CAP) -> str:
    """The one message for the residues ``unmatched`` (OpenMM residues).

    Parameters
    ----------
    unmatched : list of openmm.app.Residue
        Residues that match no template.
    has_hydrogens : bool
        Whether the structure holds any hydrogen atom.
    add_hydrogens, repair : bool
        The options this run was given.
    standard_names : set of str
        Residue names the force field knows as standard (complete residues match).
    modified_parents : dict
        Modified residue name -> parent name that ``--repair`` substitutes.
    force_field_label : str
        The force field files, as named in the message.
    gaps : sequence of dict
        Chain breaks found (``after``, ``before``, ``c_n_distance``), named when one of their
        ends is unmatched.
    budget : int
        Longest message wanted (characters): the residue listings are shortened (with their
        "(n more)") until the whole message, with its advice, fits.

    Returns
    -------
    str
        One line: how many residues match no template, and what helps for each kind.
    """
    for limit in (LIST_CHARACTERS, 200, 150, 110, 80, 50, 30):
        message = _unmatched_message(unmatched, has_hydrogens, add_hydrogens, repair, standard_names,
                                     modified_parents, force_field_label, gaps, limit)
        if len(message) <= budget:
            break
    return message


def _unmatched_message(unmatched, has_hydrogens, add_hydrogens, repair, standard_names, modified_parents,
                       force_field_label, gaps, limit) -> str:
    grouped = lambda residues: grouped_listing(residues, limit)  # noqa: E731
    water4 = [r for r in unmatched if is_four_site_water(r)]
    modified = [r for r in unmatched if r not in water4 and r.name in modified_parents]
    incomplete = [r for r in unmatched if r not in water4 and r not in modified and r.name in standard_names]
    other = [r for r in unmatched if r not in water4 and r not in modified and r not in incomplete]
    parts = [f"{len(unmatched)} residue(s) match no template of {force_field_label}."]
    labels = {residue_label(r) for r in unmatched}
    at_ends = [g for g in gaps if g["after"] in labels or g["before"] in labels]
    if at_ends:
        shown = ", ".join(f"{g['after']} - {g['before']} ("
                          + ("atom missing" if g["c_n_distance"] is None else f"C-N {g['c_n_distance']:.2f} A")
                          + ")" for g in at_ends[:6])
        more = f" ({len(at_ends) - 6} more)" if len(at_ends) > 6 else ""
        parts.append(f"Chain breaks (never bonded across; both ends become chain termini): {shown}{more}.")
    if not has_hydrogens and not add_hydrogens and not repair:
        parts.append("The structure has no hydrogen atoms: add them with --add-hydrogens "
                     "(or --repair, which also rebuilds missing atoms).")
    if water4:
        parts.append(f"4-site water model: {grouped(water4)} carry an extra massless site; "
                     "the built-in force field uses 3-site TIP3P water, and --repair removes the "
                     "extra sites.")
    if modified:
        pairs = ", ".join(sorted({f"{r.name}->{modified_parents[r.name]}" for r in modified}))
        parts.append(f"Modified residues: {grouped(modified)}; --repair replaces them by "
                     f"their parents ({pairs}).")
    if incomplete:
        if has_hydrogens or add_hydrogens or repair:
            fix = ("--repair rebuilds missing heavy atoms and terminal groups" if not repair else
                   "their atoms differ from the templates even after --repair; check their atom names")
            parts.append(f"Standard residues with missing or extra atoms: {grouped(incomplete)}; "
                         f"{fix}.")
        else:
            parts.append(f"({len(incomplete)} of them are standard residues that need the hydrogens.)")
    if other:
        parts.append(f"No template: {grouped(other)}; give their templates with "
                     "--forcefield-file FILE.xml (OpenMM force-field XML), or leave them out with "
                     "--drop-unmatched.")
    return " ".join(parts)
