"""Settings of one energy computation (validated once, here)."""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

from energy.errors import SettingsError

ELECTROSTATICS = ("plain", "reaction-field", "distance-dependent", "shifted")
VDW_MODELS = ("lj", "exp6")
#: Exp-6 steepness whose curvature at the minimum equals that of the LJ 12-6 form with the same
#: Rmin and eps: 6a(a-7)/(a-6) = 72, i.e. a^2 - 19a + 72 = 0 (derived in docs/physics.md).
EXP6_ALPHA_MATCHING_LJ = (19.0 + math.sqrt(73.0)) / 2.0


@dataclass(frozen=True)
class EnergySettings:
    """Every knob of the nonbonded computation.

    cutoff_angstrom: ``None`` for no cutoff (all pairs, exact; the default) or the pair cutoff in A.
    switch_angstrom: start of the Lennard-Jones switching function (needs a cutoff; must be below it).
    electrostatics: ``plain`` (Coulomb with dielectric ``dielectric``), ``reaction-field``
        (needs a cutoff; solvent dielectric ``solvent_dielectric``) or ``distance-dependent``
        (eps = ``dielectric`` * r, with r in A).
    dielectric: relative dielectric of the plain form, or the factor D of eps = D*r.
    solvent_dielectric: dielectric beyond the cutoff for the reaction field
        (78.5 by default, water at 298 K, common practice).
    use_periodic: apply minimum image when the frame has a unit cell and a cutoff is used.
    vdw: repulsion-dispersion model, ``lj`` (the force field's own 12-6 form) or ``exp6``
        (Buckingham exp-6 with the same Rmin and eps per pair, steepness ``exp6_alpha``).
    electrostatics ``shifted`` (needs a cutoff): shifted-force Coulomb, zero energy and force
        at the cutoff.
    """

    cutoff_angstrom: float | None = None
    switch_angstrom: float | None = None
    electrostatics: str = "plain"
    dielectric: float = 1.0
    solvent_dielectric: float = 78.5
    use_periodic: bool = True
    vdw: str = "lj"
    exp6_alpha: float = EXP6_ALPHA_MATCHING_LJ

    def __post_init__(self):
        if self.electrostatics not in ELECTROSTATICS:
            raise SettingsError(f"electrostatics must be one of {', '.join(ELECTROSTATICS)}; "
                                f"got {self.electrostatics!r}")
        if self.cutoff_angstrom is not None and not self.cutoff_angstrom > 0:
            raise SettingsError(f"cutoff must be positive, got {self.cutoff_angstrom}")
        if self.switch_angstrom is not None:
            if self.cutoff_angstrom is None:
                raise SettingsError("a switching distance needs a cutoff (--cutoff)")
            if not 0 < self.switch_angstrom < self.cutoff_angstrom:
                raise SettingsError(f"switching distance {self.switch_angstrom} A must lie between 0 "
                                    f"and the cutoff {self.cutoff_angstrom} A")
        if self.electrostatics in ("reaction-field", "shifted") and self.cutoff_angstrom is None:
            raise SettingsError(f"{self.electrostatics} electrostatics needs a cutoff (--cutoff)")
        if self.vdw not in VDW_MODELS:
            raise SettingsError(f"vdw model must be one of {', '.join(VDW_MODELS)}; got {self.vdw!r}")
        if not self.exp6_alpha > 7.0:
            raise SettingsError(f"the exp-6 steepness must exceed 7 for the curve to have a minimum; "
                                f"got {self.exp6_alpha}")
        if not self.dielectric > 0:
            raise SettingsError(f"dielectric must be positive, got {self.dielectric}")
        if not self.solvent_dielectric >= 1:
            raise SettingsError(f"solvent dielectric must be >= 1, got {self.solvent_dielectric}")

    def as_dict(self) -> dict:
        """The settings as a plain dict (``dataclasses.asdict``), e.g. for JSON.

        Returns
        -------
        dict
            Field name -> value (lengths in angstrom, ``None`` where unset).
        """
        return asdict(self)

    def describe(self) -> str:
        """Short human description, e.g. for plot titles.

        Returns
        -------
        str
            Cutoff (and switching), electrostatics and vdW model, e.g.
            ``"no cutoff, Coulomb ε 1, LJ 12-6"`` (the window's own symbols: ε, Å, α).
        """
        cut = "no cutoff" if self.cutoff_angstrom is None else f"cutoff {self.cutoff_angstrom:g} Å"
        if self.switch_angstrom is not None:
            cut += f" (LJ switch from {self.switch_angstrom:g} Å)"
        el = {"plain": f"Coulomb ε {self.dielectric:g}",
              "reaction-field": f"reaction field, solvent ε {self.solvent_dielectric:g}",
              "distance-dependent": f"Coulomb ε = {self.dielectric:g}r",
              "shifted": f"shifted-force Coulomb ε {self.dielectric:g}"}[self.electrostatics]
        vdw = "LJ 12-6" if self.vdw == "lj" else f"exp-6 α {self.exp6_alpha:.3f}"
        return f"{cut}, {el}, {vdw}"
