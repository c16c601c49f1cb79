"""Outputs of the clash finder: labels, the JSON document, CSV and the text table.

The findings themselves come from :func:`energy.analysis.clashes.find_clashes`; definitions are in
``docs/clashes.md``.
"""
from __future__ import annotations

import csv
import io

import numpy as np

from energy.analysis.clashes import ClashOptions, ClashReport
from energy.analysis.vdw_radii import BONDI_SOURCE
from energy.model.system import MolecularSystem
from energy.output.header import document_header


def atom_label(system: MolecularSystem, i: int) -> str:
    """``B:TRP33 CZ2`` style label of atom ``i``.

    Parameters
    ----------
    system : MolecularSystem
        The system.
    i : int
        Atom index (0-based).

    Returns
    -------
    str
        Residue label and atom name.
    """
    return system.atom_label(i)


def radii_description(options: ClashOptions) -> str:
    """One-line description of the radii used, for reports.

    Parameters
    ----------
    options : ClashOptions
        The search options (``radii``).

    Returns
    -------
    str
        Bondi radii with their citation, or the force-field contact rule.
    """
    if options.radii == "bondi":
        return f"Bondi radii ({BONDI_SOURCE})"
    return "force-field radii (contact = the pair's LJ Rmin_ij)"


def clash_rows(system: MolecularSystem, report: ClashReport) -> list[dict]:
    """The ranked clashes as plain dicts (one per clash, most severe first).

    Parameters
    ----------
    system : MolecularSystem
        The system searched (labels, residue indices).
    report : ClashReport
        The clash finder's result.

    Returns
    -------
    list of dict
        ``rank`` (1-based), ``atom_i``, ``atom_j`` (0-based), ``label_i``, ``label_j``,
        ``residue_i``, ``residue_j``, ``distance``, ``contact``, ``overlap`` (float, A), ``lj``,
        ``exp6`` (float, kcal/mol; exp6 NaN when the report has none), ``is_14``, ``is_hbond`` (bool).
    """
    rows = []
    for k in range(len(report)):
        i, j = (int(v) for v in report.pairs[k])
        rows.append({"rank": k + 1, "atom_i": i, "atom_j": j,
                     "label_i": atom_label(system, i), "label_j": atom_label(system, j),
                     "residue_i": int(system.resindex[i]), "residue_j": int(system.resindex[j]),
                     "distance": float(report.distance[k]), "contact": float(report.contact[k]),
                     "overlap": float(report.overlap[k]), "lj": float(report.lj[k]),
                     "exp6": float(report.exp6[k]) if len(report.exp6) == len(report) else float("nan"),
                     "is_14": bool(report.is_14[k]), "is_hbond": bool(report.is_hbond[k])})
    return rows


def clash_document(system: MolecularSystem, report: ClashReport, source: dict | None = None) -> dict:
    """Everything as one JSON-ready dict (units: angstrom, kcal/mol; indices 0-based).

    Non-finite floats are written as None.

    Parameters
    ----------
    system : MolecularSystem
        The system searched (labels, residue indices).
    report : ClashReport
        The clash finder's result.
    source : dict or None, optional
        Description of the inputs (``structure``, ``coordinates``, ``parameters``, ``frame``,
        ``force_field``), stored under ``inputs``.

    Returns
    -------
    dict
        The header (:func:`energy.output.header.document_header`: ``kind`` ``"overlaps"``,
        ``inputs``, ``settings`` = the clash options), ``units``, ``radii``, ``notes``, search counts,
        ``clashes`` (:func:`clash_rows`), ``residue_counts`` and ``residue_pairs``.
    """
    counts = report.residue_counts(system)
    return {
        **document_header("overlaps", source or {}, report.options.as_dict()),
        "units": {"distance": "angstrom", "energy": "kcal/mol"},
        "radii": radii_description(report.options),
        "notes": list(report.notes),
        "n_atoms_searched": report.n_atoms_searched,
        "n_candidate_pairs": report.n_candidates,
        "search_distance": report.search_distance,
        "n_clashes": len(report),
        "clashes": [{k: (None if isinstance(v, float) and not np.isfinite(v) else v)
                     for k, v in row.items()} for row in clash_rows(system, report)],
        "residue_counts": [{"residue": int(r), "label": system.residues.label(int(r)),
                            "count": int(counts[r])} for r in np.flatnonzero(counts)],
        "residue_pairs": [{"res_i": p.res_i, "res_j": p.res_j,
                           "label_i": system.residues.label(p.res_i),
                           "label_j": system.residues.label(p.res_j),
                           "count": p.count, "worst_overlap": p.worst_overlap,
                           "lj_sum": p.lj_sum if np.isfinite(p.lj_sum) else None,
                           "exp6_sum": p.exp6_sum if np.isfinite(p.exp6_sum) else None,
                           "worst_rank": p.worst + 1} for p in report.residue_pairs(system)],
    }


CSV_FIELDS = ("rank", "label_i", "label_j", "atom_i", "atom_j", "residue_i", "residue_j",
              "distance", "contact", "overlap", "lj", "exp6", "is_14", "is_hbond")


def clash_csv(system: MolecularSystem, report: ClashReport) -> str:
    """The ranked clashes as CSV text, columns :data:`CSV_FIELDS`.

    Floats are written with four decimals (A, kcal/mol).

    Parameters
    ----------
    system : MolecularSystem
        The system searched (labels, residue indices).
    report : ClashReport
        The clash finder's result.

    Returns
    -------
    str
        Header line, then one line per clash.
    """
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(CSV_FIELDS)
    for row in clash_rows(system, report):
        w.writerow([f"{row[f]:.4f}" if isinstance(row[f], float) else row[f] for f in CSV_FIELDS])
    return buf.getvalue()


def _fmt_energy(e: float) -> str:
    return f"{e:12.1f}" if abs(e) < 1e7 else f"{e:12.3e}"


def clash_table(system: MolecularSystem, report: ClashReport, top: int = 20) -> str:
    """Readable summary: criteria, ranked atom pairs, then residue pairs.

    Parameters
    ----------
    system : MolecularSystem
        The system searched (labels, residue indices).
    report : ClashReport
        The clash finder's result.
    top : int, optional
        Atom pairs and residue pairs shown (default 20; 0 or less shows all).

    Returns
    -------
    str
        The text table (distances in Å, energies in kcal/mol; the window's symbols ≥, Å, α), lines joined by newlines.
    """
    o = report.options
    crit = []
    if o.overlap is not None:
        crit.append(f"overlap ≥ {o.overlap:g} Å")
    if o.lj_above is not None:
        crit.append(f"LJ > {o.lj_above:g} kcal/mol")
    scope = "all atoms" if o.include_hydrogens else "heavy atoms"
    lines = [f"{len(report)} clash(es): {(' or ' if o.combine == 'any' else ' and ').join(crit)}; "
             f"{radii_description(o)}; {scope}; 1-2/1-3 excluded, 1-4 "
             f"{'included' if o.include_14 else 'excluded'}"
             f"{'; periodic' if o.periodic else ''}"
             f"{'; H-bond pairs at H-bond contact' if o.hbond else '; no H-bond allowance'}"
             f"; exp-6 column: α = {o.exp6_alpha:.3f}"]
    lines += [f"note: {n}" for n in report.notes]
    if not len(report):
        return "\n".join(lines)
    rows = clash_rows(system, report)
    shown = rows[:top] if top and top > 0 else rows
    wi = max(len("atom i"), *(len(r["label_i"]) for r in shown))
    wj = max(len("atom j"), *(len(r["label_j"]) for r in shown))
    lines.append("")
    lines.append(f"{'rank':>4}  {'atom i':<{wi}}  {'atom j':<{wj}}  {'r (Å)':>6}  {'contact':>7}  "
                 f"{'overlap':>7}  {'LJ (kcal/mol)':>13}  {'exp-6':>12}")
    for r in shown:
        lines.append(f"{r['rank']:>4}  {r['label_i']:<{wi}}  {r['label_j']:<{wj}}  {r['distance']:6.2f}  "
                     f"{r['contact']:7.2f}  {r['overlap']:7.2f}  {_fmt_energy(r['lj']):>13}  "
                     f"{_fmt_energy(r['exp6'])}"
                     f"{'  (1-4)' if r['is_14'] else ''}{'  (H-bond pair)' if r['is_hbond'] else ''}")
    if len(shown) < len(rows):
        lines.append(f"... {len(rows) - len(shown)} more (use --top 0 for all, or --json/--csv)")
    pairs = report.residue_pairs(system)
    lines.append("")
    lines.append(f"{len(pairs)} residue pair(s) with clashes:")
    wl = max(len(f"{system.residues.label(p.res_i)} - {system.residues.label(p.res_j)}") for p in pairs)
    lines.append(f"  {'residue pair':<{wl}}  {'count':>5}  {'worst overlap':>13}  {'sum LJ':>12}  "
                 f"{'sum exp-6':>12}")
    for p in pairs[:top] if top and top > 0 else pairs:
        lab = f"{system.residues.label(p.res_i)} - {system.residues.label(p.res_j)}"
        lines.append(f"  {lab:<{wl}}  {p.count:>5}  {p.worst_overlap:13.2f}  {_fmt_energy(p.lj_sum)}  "
                     f"{_fmt_energy(p.exp6_sum)}")
    return "\n".join(lines)
