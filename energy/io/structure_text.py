"""The text of a deposited PDB or mmCIF file, checked and made unambiguous before it is parsed.

* ``.gz``-compressed files are read as they are (:func:`read_structure_text`).
* PDB ``MODEL`` and ``ATOM``/``HETATM`` records are checked column by column (wwPDB format 3.3:
  model number in columns 11-14; x, y, z in 31-38, 39-46, 47-54; occupancy 55-60): a malformed
  record stops the run with the file and line (:func:`check_pdb_records`).  A ``MODEL`` line
  whose number is an integer in the wrong columns is rewritten in the standard ones.
* Alternate locations are chosen deterministically, residue by residue: the label with the
  highest mean occupancy, then the first label in the file (:func:`choose_altlocs`).  The atoms
  of the other labels are removed, so every reader downstream sees one conformation.
"""
from __future__ import annotations

import gzip
import os
import shlex
from dataclasses import dataclass

from energy.errors import StructureFileError
from energy.io.pdb_columns import text_records_plain

PDBX_SUFFIXES = (".cif", ".mmcif", ".pdbx")


def structure_suffix(path) -> str:
    """The format suffix of ``path`` with a ``.gz`` stripped first (``"x.pdb.gz"`` -> ``".pdb"``).

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    str
        Lower-case suffix with its dot (``""`` if there is none).
    """
    name = os.path.basename(os.fspath(path)).lower()
    if name.endswith(".gz"):
        name = name[:-3]
    return os.path.splitext(name)[1]


def read_structure_text(path) -> str:
    """The whole text of ``path`` (gzip-compressed if it ends in ``.gz``).

    Parameters
    ----------
    path : str or os.PathLike

    Returns
    -------
    str
        The text, read as UTF-8 (undecodable bytes replaced).

    Raises
    ------
    StructureFileError
        The file is missing or cannot be read.
    """
    path = os.fspath(path)
    try:
        if path.lower().endswith(".gz"):
            with gzip.open(path, "rt", encoding="utf-8", errors="replace") as fh:
                return fh.read()
        with open(path, encoding="utf-8", errors="replace") as fh:
            return fh.read()
    except FileNotFoundError:
        raise StructureFileError(path, "file not found") from None
    except (OSError, EOFError) as exc:
        raise StructureFileError(path, f"cannot read the file ({exc})") from None


def _number(field: str):
    try:
        return float(field)
    except ValueError:
        return None


def check_pdb_records(text: str, path) -> str:
    """Check the MODEL and ATOM/HETATM records of PDB ``text``.

    Parameters
    ----------
    text : str
        PDB text.
    path : str or os.PathLike
        The file, named in errors.

    Returns
    -------
    str
        ``text`` with MODEL lines in standard columns.

    Raises
    ------
    StructureFileError
        With the file and the 1-based line of the first malformed record.
    """
    if text_records_plain(text):
        return text  # every record plainly written (checked by columns, all at once)
    lines = text.splitlines(keepends=True)
    for number, line in enumerate(lines, start=1):
        record = line[:6]
        if record == "MODEL " or line.rstrip() == "MODEL":
            rest = line[6:].strip()
            try:
                model = int(rest)
            except ValueError:
                raise StructureFileError(path, f"MODEL record: the model number {rest!r} is not an "
                                         "integer (wwPDB format: columns 11-14)", number) from None
            lines[number - 1] = f"MODEL     {model:4d}\n"
        elif record in ("ATOM  ", "HETATM"):
            body = line.rstrip("\r\n")
            if len(body) < 54:
                raise StructureFileError(path, f"{record.strip()} record too short ({len(body)} "
                                         "characters; x, y, z take columns 31-54)", number)
            for name, a, b in (("x", 30, 38), ("y", 38, 46), ("z", 46, 54)):
                if _number(body[a:b]) is None:
                    raise StructureFileError(path, f"{record.strip()} record: {name} coordinate "
                                             f"{body[a:b].strip()!r} is not a number (columns "
                                             f"{a + 1}-{b})", number)
            occupancy = body[54:60]
            if occupancy.strip() and _number(occupancy) is None:
                raise StructureFileError(path, f"{record.strip()} record: occupancy "
                                         f"{occupancy.strip()!r} is not a number (columns 55-60)",
                                         number)
    return "".join(lines)


@dataclass(frozen=True)
class AltlocChoice:
    """One residue with alternate locations: its label, the labels with their mean occupancy,
    and the one kept."""

    residue: str
    occupancies: dict
    chosen: str

    def as_dict(self) -> dict:
        """The choice as a JSON-ready dictionary.

        Returns
        -------
        dict
            ``residue``, ``labels`` (label -> mean occupancy) and ``chosen``.
        """
        return {"residue": self.residue, "labels": dict(self.occupancies), "chosen": self.chosen}


def _choose(groups) -> dict:
    """{key: chosen label} from {key: {label: [occupancies...]}} (dicts keep file order)."""
    chosen = {}
    for key, labels in groups.items():
        means = {label: sum(v) / len(v) for label, v in labels.items()}
        best = max(means.values())
        chosen[key] = next(label for label, m in means.items() if m == best)  # first of the best
    return chosen


def _label(chain, resname, resseq, icode):
    chain = chain.strip()
    return f"{chain + ':' if chain else ''}{resname.strip()}{resseq.strip()}{icode.strip()}"


def choose_altlocs_pdb(text: str) -> tuple[str, list[AltlocChoice]]:
    """Keep one alternate location per residue of PDB ``text`` (see the module docstring).

    Parameters
    ----------
    text : str
        PDB text.

    Returns
    -------
    (str, list of AltlocChoice)
        The text with the other alternate locations removed, and the choices (first model).
    """
    lines = text.splitlines(keepends=True)
    groups, names, model = {}, {}, 0
    for line in lines:
        if line.startswith("MODEL "):
            model += 1
        elif line.startswith(("ATOM  ", "HETATM")) and len(line) > 16 and line[16] != " ":
            key = (model, line[21:22], line[22:26], line[26:27])
            occupancy = _number(line[54:60]) if len(line) >= 60 else None
            groups.setdefault(key, {}).setdefault(line[16], []).append(
                1.0 if occupancy is None else occupancy)
            names.setdefault((key, line[16]), line[17:20])
    if not groups:
        return text, []
    chosen = _choose(groups)
    out, model = [], 0
    for line in lines:
        if line.startswith("MODEL "):
            model += 1
        elif line.startswith(("ATOM  ", "HETATM", "ANISOU")) and len(line) > 16 and line[16] != " ":
            key = (model, line[21:22], line[22:26], line[26:27])
            if line[16] != chosen.get(key, line[16]):
                continue
            line = line[:16] + " " + line[17:]
        out.append(line)
    choices = [AltlocChoice(_label(k[1], names[(k, chosen[k])], k[2], k[3]),
                            {label: round(sum(v) / len(v), 4) for label, v in groups[k].items()},
                            chosen[k]) for k in groups if k[0] <= 1]
    return "".join(out), choices


def choose_altlocs_pdbx(text: str) -> tuple[str, list[AltlocChoice]]:
    """Keep one alternate location per residue of mmCIF ``text``.

    Rows of the ``atom_site`` loop whose ``label_alt_id`` is another label are removed (the rule
    of :func:`choose_altlocs_pdb`).

    Parameters
    ----------
    text : str
        PDBx/mmCIF text.

    Returns
    -------
    (str, list of AltlocChoice)
        The text without the rows of the other labels, and the choices (first model).
    """
    lines = text.splitlines(keepends=True)
    fields, start, k = [], None, 0
    while k < len(lines):
        if lines[k].strip() == "loop_" and k + 1 < len(lines) and lines[k + 1].startswith("_atom_site."):
            k += 1
            while k < len(lines) and lines[k].startswith("_atom_site."):
                fields.append(lines[k].split()[0][len("_atom_site."):])
                k += 1
            start = k
            break
        k += 1
    if start is None or "label_alt_id" not in fields:
        return text, []
    col = {name: fields.index(name) for name in fields}
    get = lambda row, name, default="": row[col[name]] if name in col else default  # noqa: E731
    rows = []
    k = start
    while k < len(lines) and not lines[k].startswith(("_", "loop_", "#")) and lines[k].strip():
        try:
            rows.append((k, shlex.split(lines[k])))
        except ValueError:
            rows.append((k, lines[k].split()))
        k += 1
    groups, names = {}, {}
    for _, row in rows:
        if len(row) != len(fields) or get(row, "label_alt_id") in (".", "?"):
            continue
        key = (get(row, "pdbx_PDB_model_num", "1"), get(row, "auth_asym_id"), get(row, "auth_seq_id"),
               get(row, "pdbx_PDB_ins_code", "?"))
        occupancy = _number(get(row, "occupancy", "1"))
        groups.setdefault(key, {}).setdefault(get(row, "label_alt_id"), []).append(
            1.0 if occupancy is None else occupancy)
        names.setdefault((key, get(row, "label_alt_id")), get(row, "auth_comp_id", get(row, "label_comp_id")))
    if not groups:
        return text, []
    chosen = _choose(groups)
    drop = set()
    for k, row in rows:
        if len(row) != len(fields) or get(row, "label_alt_id") in (".", "?"):
            continue
        key = (get(row, "pdbx_PDB_model_num", "1"), get(row, "auth_asym_id"), get(row, "auth_seq_id"),
               get(row, "pdbx_PDB_ins_code", "?"))
        if get(row, "label_alt_id") != chosen[key]:
            drop.add(k)
    first_model = min(key[0] for key in groups)
    choices = [AltlocChoice(_label(key[1], names[(key, chosen[key])], key[2],
                                   "" if key[3] in ("?", ".") else key[3]),
                            {label: round(sum(v) / len(v), 4) for label, v in groups[key].items()},
                            chosen[key]) for key in groups if key[0] == first_model]
    return "".join(line for k, line in enumerate(lines) if k not in drop), choices
