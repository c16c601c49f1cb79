"""Settings of one energy computation (validated once, here)."""
from __future__ import annotations

from dataclasses import asdict, dataclass

from .errors import SettingsError

ELECTROSTATICS = ("plain", "reaction-field", "distance-dependent")


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
    """

    cutoff_angstrom: float | None = None
    switch_angstrom: float | None = None
    electrostatics: str = "plain"
    dielectric: float = 1.0
    solvent_dielectric: float = 78.5
    use_periodic: bool = True

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
        if self.electrostatics == "reaction-field" and self.cutoff_angstrom is None:
            raise SettingsError("the reaction field needs a cutoff (--cutoff)")
        if not self.dielectric > 0:
            raise SettingsError(f"dielectric must be positive, got {self.dielectric}")
        if not self.solvent_dielectric >= 1:
            raise SettingsError(f"solvent dielectric must be >= 1, got {self.solvent_dielectric}")

    def as_dict(self) -> dict:
        return asdict(self)

    def describe(self) -> str:
        """Short human description, e.g. for plot titles."""
        cut = "no cutoff" if self.cutoff_angstrom is None else f"cutoff {self.cutoff_angstrom:g} A"
        if self.switch_angstrom is not None:
            cut += f" (LJ switch from {self.switch_angstrom:g} A)"
        el = {"plain": f"Coulomb eps={self.dielectric:g}",
              "reaction-field": f"reaction field eps_rf={self.solvent_dielectric:g}",
              "distance-dependent": f"eps={self.dielectric:g}r"}[self.electrostatics]
        return f"{cut}, {el}"
