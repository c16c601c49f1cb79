"""Settings of one energy computation (validated once, here)."""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass, replace

from energy.errors import SettingsError
from energy.units import debye_kappa_per_angstrom

ELECTROSTATICS = ("plain", "reaction-field", "distance-dependent", "shifted")
VDW_MODELS = ("lj", "exp6")
#: Generalized Born models of ``implicit_solvent`` (docs/physics.md, "Implicit solvent").
IMPLICIT_SOLVENT_MODELS = ("obc2", "gbn2")
#: Nonpolar solvation models: ``ace`` (surface-area-like term from the Born radii) or ``none``.
NONPOLAR_MODELS = ("ace", "none")
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
    implicit_solvent: ``None`` (in vacuo, the default), ``obc2`` or ``gbn2`` (generalized Born;
        needs ``electrostatics="plain"``: Coulomb then uses the solute dielectric ``dielectric``,
        the GB term the solvent dielectric ``solvent_dielectric``; docs/physics.md).
    salt_molar: ionic strength of the implicit solvent, mol/L (Debye-Hueckel screening of the GB
        term; 0 by default).  temperature_kelvin: temperature of the Debye length (298.15 K).
    nonpolar: ``ace`` (the default with implicit solvent) or ``none``.
    """

    cutoff_angstrom: float | None = None
    switch_angstrom: float | None = None
    electrostatics: str = "plain"
    dielectric: float = 1.0
    solvent_dielectric: float = 78.5
    use_periodic: bool = True
    vdw: str = "lj"
    exp6_alpha: float = EXP6_ALPHA_MATCHING_LJ
    implicit_solvent: str | None = None
    salt_molar: float = 0.0
    temperature_kelvin: float = 298.15
    nonpolar: str = "ace"

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
        if self.implicit_solvent is not None:
            if self.implicit_solvent not in IMPLICIT_SOLVENT_MODELS:
                raise SettingsError(f"implicit solvent must be one of {', '.join(IMPLICIT_SOLVENT_MODELS)}; "
                                    f"got {self.implicit_solvent!r}")
            if self.electrostatics != "plain":
                raise SettingsError(f"implicit solvent uses plain Coulomb with the solute dielectric; "
                                    f"{self.electrostatics} electrostatics cannot be combined with it")
        if self.nonpolar not in NONPOLAR_MODELS:
            raise SettingsError(f"nonpolar model must be one of {', '.join(NONPOLAR_MODELS)}; got {self.nonpolar!r}")
        if not (math.isfinite(self.salt_molar) and self.salt_molar >= 0):
            raise SettingsError(f"salt concentration must be >= 0 mol/L, got {self.salt_molar}")
        if not (math.isfinite(self.temperature_kelvin) and self.temperature_kelvin > 0):
            raise SettingsError(f"temperature must be positive, got {self.temperature_kelvin} K")

    @property
    def kappa_per_angstrom(self) -> float:
        """Debye-Hueckel screening of the implicit solvent (:func:`energy.units.debye_kappa_per_angstrom`).

        Returns
        -------
        float
            kappa, 1/A, from ``salt_molar``, ``solvent_dielectric`` and ``temperature_kelvin``.
        """
        return debye_kappa_per_angstrom(self.salt_molar, self.solvent_dielectric, self.temperature_kelvin)

    def coulomb_settings(self) -> EnergySettings:
        """The settings the Coulomb kernel sees.

        In vacuo: ``self``.  With implicit solvent and a cutoff, OpenMM's convention (its implicit
        solvent files set the reaction-field dielectric to 1): Coulomb with the solute dielectric,
        no reaction field, shifted to zero at the cutoff (docs/physics.md).

        Returns
        -------
        EnergySettings
            Settings for :class:`~energy._kernels.pair_forms.KernelConstants`.
        """
        if self.implicit_solvent is None or self.cutoff_angstrom is None:
            return self
        return replace(self, electrostatics="reaction-field", solvent_dielectric=self.dielectric,
                       implicit_solvent=None)

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
        text = f"{cut}, {el}, {vdw}"
        if self.implicit_solvent is not None:
            text += f", GB {self.implicit_solvent.upper()} solvent ε {self.solvent_dielectric:g}"
            if self.salt_molar > 0:
                text += f" salt {self.salt_molar:g} M"
            if self.nonpolar == "ace":
                text += " + ACE"
        return text
