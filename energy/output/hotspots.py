"""An alanine scan as files and text: ranked rows, CSV, the JSON document of ``tessera hotspots``
and its summary.  Every output names the truncation method of each residue and says what the
2 kcal/mol marker is (docs/physics.md, "Alanine scan")."""
from __future__ import annotations

import csv
import io
import math

from energy.analysis.hotspots import HOT_SPOT_KCAL_MOL, LOST_CONTACTS, HotspotScan

#: One line that goes with every output of the scan.
CAVEAT = (f"dE = E_int(mutant) - E_int(wild type), MM interaction energy of one structure (no "
          f"relaxation, entropy or solvent); 'hot' marks dE >= {HOT_SPOT_KCAL_MOL:g} kcal/mol, the "
          "experimental convention for the binding free energy change (ddG) of an alanine mutation, "
          "used here only as a marker")
#: The same line for a scan with implicit solvent.
CAVEAT_SOLVATED = (f"dE = change of the MM interaction energy plus the change of the generalized-Born "
                   f"solvation of binding, G_solv(AB) - G_solv(A) - G_solv(B), of one structure (no "
                   f"relaxation, entropy or explicit water); 'hot' marks dE >= {HOT_SPOT_KCAL_MOL:g} "
                   "kcal/mol, the experimental convention for the binding free energy change (ddG) of an "
                   "alanine mutation, used here only as a marker")


def caveat(scan: HotspotScan) -> str:
    """The caveat line of a scan (:data:`CAVEAT`, or :data:`CAVEAT_SOLVATED` with implicit solvent).

    Parameters
    ----------
    scan : HotspotScan
        The scan.

    Returns
    -------
    str
        One line.
    """
    return CAVEAT_SOLVATED if scan.settings.implicit_solvent is not None else CAVEAT


def hotspot_rows(scan: HotspotScan, system) -> list[dict]:
    """One row per scanned residue, ranked by dE (largest first).

    Parameters
    ----------
    scan : HotspotScan
        Result of :func:`energy.analysis.hotspots.alanine_scan`.
    system : MolecularSystem
        The wild type (labels of the partner residues).

    Returns
    -------
    list of dict
        ``rank`` (int, 1-based), ``residue`` (int, 0-based index), ``label``, ``side``,
        ``resname``, ``class``, ``method``, ``flag`` (str), ``delta_total`` and
        ``delta_<term>`` (``delta_solvation_polar`` and ``delta_solvation_nonpolar`` with implicit
        solvent), ``removed``, ``rebuilt`` (float, kcal/mol; the pairwise terms' split), ``hot`` (bool) and
        ``lost_contacts`` (list of ``{"label", "residue", "delta"}``, kcal/mol).
    """
    total = scan.total
    rows = []
    for k in range(len(scan)):
        lost = [{"label": system.residues.label(int(p)), "residue": int(p), "delta": float(e)}
                for p, e in zip(scan.lost_partner[k], scan.lost_energy[k]) if p >= 0]
        rows.append({"rank": k + 1, "residue": int(scan.residue[k]), "label": str(scan.label[k]),
                     "side": str(scan.side[k]), "resname": str(scan.resname[k]),
                     "class": str(scan.side_chain_class[k]), "method": str(scan.method[k]),
                     "flag": str(scan.flag[k]), "delta_total": float(total[k]),
                     **{f"delta_{t}": float(v[k]) for t, v in scan.delta.items()},
                     "removed": float(scan.removed[k]), "rebuilt": float(scan.rebuilt[k]),
                     "hot": bool(total[k] >= HOT_SPOT_KCAL_MOL), "lost_contacts": lost})
    return rows


def _require_finite(rows) -> None:
    from energy.errors import NonFiniteEnergyError
    for row in rows:
        for key, value in row.items():
            if isinstance(value, float) and not math.isfinite(value):
                raise NonFiniteEnergyError(key, row["label"])


def hotspot_csv(scan: HotspotScan, system) -> str:
    """The ranked table as CSV (one row per residue, lost contacts as label/value columns).

    Parameters
    ----------
    scan : HotspotScan
        The scan.
    system : MolecularSystem
        The wild type.

    Returns
    -------
    str
        CSV text with a header; energies kcal/mol with 6 decimals.
    """
    rows = hotspot_rows(scan, system)
    _require_finite(rows)
    terms = [f"delta_{t}" for t in scan.delta]
    header = ["rank", "residue", "label", "side", "resname", "class", "method", "flag", "hot",
              "delta_total", *terms, "removed", "rebuilt"]
    for c in range(LOST_CONTACTS):
        header += [f"lost_{c + 1}", f"lost_{c + 1}_delta"]
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(header)
    for row in rows:
        values = [row["rank"], row["residue"], row["label"], row["side"], row["resname"], row["class"],
                  row["method"], row["flag"], int(row["hot"]),
                  *(f"{row[h]:.6f}" for h in ["delta_total", *terms, "removed", "rebuilt"])]
        for c in range(LOST_CONTACTS):
            lost = row["lost_contacts"][c] if c < len(row["lost_contacts"]) else None
            values += [lost["label"], f"{lost['delta']:.6f}"] if lost else ["", ""]
        writer.writerow(values)
    return out.getvalue()


def hotspot_document(scan: HotspotScan, system, inputs: dict, timings: dict | None = None) -> dict:
    """The JSON document of ``tessera hotspots``.

    Parameters
    ----------
    scan : HotspotScan
        The scan.
    system : MolecularSystem
        The wild type.
    inputs : dict
        Input files and options to record (JSON-serialisable).
    timings : dict or None, optional
        Seconds per step.

    Returns
    -------
    dict
        ``inputs``, ``settings``, ``selections``, ``interface_angstrom``, ``methods``,
        ``caveat``, ``hot_spot_kcal_mol``, ``wild_type`` (term -> kcal/mol; with implicit solvent
        the solvation terms are the wild type's solvation of binding), ``residues`` (the
        rows of :func:`hotspot_rows`), ``skipped`` (label and reason), ``timings``.
    """
    rows = hotspot_rows(scan, system)
    _require_finite(rows)
    s = scan.settings
    return {"inputs": inputs,
            "settings": {"cutoff_angstrom": s.cutoff_angstrom, "switch_angstrom": s.switch_angstrom,
                         "electrostatics": s.electrostatics, "dielectric": s.dielectric,
                         "vdw": s.vdw, "periodic": s.use_periodic and s.implicit_solvent is None,
                         "implicit_solvent": s.implicit_solvent,
                         **({"solvent_dielectric": s.solvent_dielectric, "salt_molar": s.salt_molar,
                             "nonpolar": s.nonpolar} if s.implicit_solvent is not None else {})},
            "selections": {"a": scan.select_a, "b": scan.select_b},
            "interface_angstrom": scan.interface_angstrom, "methods": list(scan.methods),
            "caveat": caveat(scan), "hot_spot_kcal_mol": HOT_SPOT_KCAL_MOL,
            "wild_type": {**scan.wild_type, "total": float(sum(scan.wild_type.values()))},
            "residues": rows,
            "skipped": [{"label": system.residues.label(r), "residue": r, "reason": why}
                        for r, why in scan.skipped],
            "timings": timings or {}}


def summary_text(scan: HotspotScan, system, top: int = 15) -> str:
    """The ranked table as text for the terminal.

    Parameters
    ----------
    scan : HotspotScan
        The scan.
    system : MolecularSystem
        The wild type.
    top : int, optional
        Rows shown (default 15); the most favourable change is always added.

    Returns
    -------
    str
        Lines of text (kcal/mol).
    """
    rows = hotspot_rows(scan, system)
    terms = list(scan.delta)
    wt = sum(scan.wild_type.values())
    lines = [f"alanine scan of {scan.select_a!r} vs {scan.select_b!r}: {len(rows)} interface residues "
             f"within {scan.interface_angstrom:g} A, {len(scan.skipped)} left out; method: "
             f"{', '.join(scan.methods)}",
             f"wild-type {'interaction + solvation of binding' if scan.settings.implicit_solvent else 'interaction'} "
             f"{wt:.2f} kcal/mol (" +
             ", ".join(f"{t} {v:.2f}" for t, v in scan.wild_type.items()) + ")",
             "rank  residue      class        dE_total " + " ".join(f"{'d' + t:>9s}" for t in terms)
             + "  hot  flag       lost most"]
    shown = rows[:top] + ([rows[-1]] if len(rows) > top else [])
    for row in shown:
        lost = ", ".join(f"{c['label']} {c['delta']:+.1f}" for c in row["lost_contacts"])
        lines.append(f"{row['rank']:4d}  {row['label']:12s} {row['class']:12s} {row['delta_total']:9.2f} "
                     + " ".join(f"{row['delta_' + t]:9.2f}" for t in terms)
                     + f"  {'yes' if row['hot'] else '   '}  {row['flag'] or '-':10s} {lost}")
    if any(r["method"] != "ALA template" for r in rows):
        lines.append("method 'side chain switched off': the atoms beyond CB are removed from the "
                     "interaction, no ALA template (residues: "
                     + ", ".join(r["label"] for r in rows if r["method"] != "ALA template") + ")")
    lines.append("note: " + caveat(scan))
    return "\n".join(lines)
