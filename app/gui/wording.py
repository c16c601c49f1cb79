"""Messages in the window's own terms: the engine's messages name the ``tessera`` options that
fix a problem (``--cutoff``, ``--repair``); the window names its own controls instead."""
from __future__ import annotations

import re

#: Option of the ``tessera`` command -> the window's control that does the same.
CONTROL_OF_OPTION = {
    "--cutoff": '"Cutoff" in Compute settings',
    "--switch": '"LJ switch from" in Compute settings',
    "--electrostatics": '"Electrostatics" in Compute settings',
    "--dielectric": '"Dielectric ε or D" in Compute settings',
    "--solvent-dielectric": '"Solvent ε (reaction field)" in Compute settings',
    "--vdw": '"LJ term form" in Compute settings',
    "--exp6-alpha": '"exp-6 steepness α" in Compute settings',
    "--no-periodic": '"Minimum image when a cell is known" in Compute settings',
    "--periodic": '"Minimum image when a cell is known" in Compute settings',
    "--add-hydrogens": '"Add missing hydrogens" in Open structure',
    "--repair": '"Repair" in Open structure',
    "--ph": '"pH (hydrogens)" in Open structure',
    "--forcefield-file": '"Templates" in Open structure',
    "--drop-unmatched": '"Leave out residues that match no template" in Open structure',
    "--frame": '"Frame of a trajectory, or model of an ensemble" in Open structure',
    "--params": '"Parameters" in Open structure',
    "--overlap": '"Flag overlaps from" in Clash check',
    "--include-hydrogens": '"Include hydrogens" in Clash check',
}

_OPTION = re.compile(r"--[a-z][a-z0-9-]*")


def in_window_terms(message: str) -> str:
    """``message`` with every ``tessera`` option replaced by the window's control for it.

    An option the window has no control for is written as a command-line option of ``tessera``
    (it is then advice for the command, and says so).

    Parameters
    ----------
    message : str
        A message of the engine.

    Returns
    -------
    str
        The message as the window shows it.
    """
    def control(match: re.Match) -> str:
        flag = match.group(0)
        if flag in CONTROL_OF_OPTION:
            return CONTROL_OF_OPTION[flag]
        return f"the tessera command's option {flag.lstrip('-')}"
    return _OPTION.sub(control, str(message))
