"""The one header of every Tessera output document (JSON of ``scan``, ``scan --frames``,
``compare`` and ``overlaps``; the result file's root attributes carry the same fields).

``program``, ``version``, ``kind``, ``inputs`` (paths and frames of what was read: ``structure``,
``coordinates``, ``parameters``, ...), ``settings`` (what the computation was asked to do).
Documents written before this header (no ``kind``, or ``source``/``coords``/``params`` instead
of ``inputs``) are read through :func:`read_header`.
"""
from __future__ import annotations

PROGRAM = "tessera"
#: The program version written into every output.
PROGRAM_VERSION = "0.1.0"
#: Every kind of output document.
KINDS = ("scan", "trajectory", "comparison", "overlaps")
#: Kinds written by earlier versions, as they are called now.
_OLD_KINDS = {"tessera-clashes": "overlaps", "comparison (second minus first)": "comparison"}
#: Input keys of earlier versions, as they are called now.
_OLD_INPUT_KEYS = {"coords": "coordinates", "params": "parameters"}


def document_header(kind: str, inputs: dict, settings: dict) -> dict:
    """The header fields every output document starts with.

    Parameters
    ----------
    kind : str
        One of :data:`KINDS`.
    inputs : dict
        What was read: ``structure``, ``coordinates``, ``parameters`` (list), a frame or frames.
    settings : dict
        The settings of the computation (JSON-ready).

    Returns
    -------
    dict
        ``program``, ``version``, ``kind``, ``inputs``, ``settings``, in that order.
    """
    if kind not in KINDS:
        raise ValueError(f"unknown output kind {kind!r}; expected one of {', '.join(KINDS)}")
    return {"program": PROGRAM, "version": PROGRAM_VERSION, "kind": kind, "inputs": dict(inputs),
            "settings": dict(settings)}


def group_interaction(doc: dict) -> dict | None:
    """The group interaction (group A vs group B) of a scan or trajectory document, or None.

    Written as ``group_interaction``; earlier documents called it ``selection``.

    Parameters
    ----------
    doc : dict
        A parsed output document.

    Returns
    -------
    dict or None
        Its ``a``, ``b`` selections and energies.
    """
    return doc.get("group_interaction", doc.get("selection"))


def _guess_kind(doc: dict) -> str:
    if "per_frame_totals" in doc:
        return "trajectory"
    if "clashes" in doc:
        return "overlaps"
    if "mutated_residues" in doc:
        return "comparison"
    return "scan"


def read_header(doc: dict) -> dict:
    """The header of a document of this or an earlier version, in this version's terms.

    Earlier documents: a clash report had ``kind`` ``"tessera-clashes"``, its inputs under
    ``source`` (``coords``, ``params``) and its settings under ``options``; a comparison's kind
    was ``"comparison (second minus first)"``; a scan had no ``kind``; none had ``version``.

    Parameters
    ----------
    doc : dict
        A parsed output document.

    Returns
    -------
    dict
        ``program``, ``version`` (None when not recorded), ``kind`` (one of :data:`KINDS`),
        ``inputs``, ``settings``.
    """
    kind = doc.get("kind")
    kind = _OLD_KINDS.get(kind, kind) if kind else _guess_kind(doc)
    inputs = doc.get("inputs")
    if inputs is None:
        inputs = {_OLD_INPUT_KEYS.get(k, k): v for k, v in (doc.get("source") or {}).items()}
    settings = doc.get("settings")
    if settings is None:
        settings = doc.get("options") or {}
    return {"program": doc.get("program", PROGRAM), "version": doc.get("version"), "kind": kind,
            "inputs": inputs, "settings": settings}
