"""The force fields bundled with OpenMM that a PDB/mmCIF can be parameterised with, by name.

``--forcefield NAME`` picks the protein/nucleic files, ``--water MODEL`` the water model among
those the force field has (each force field's own water files, as OpenMM ships them).
"""
from __future__ import annotations

from dataclasses import dataclass

from energy.errors import SettingsError


@dataclass(frozen=True)
class ForceFieldChoice:
    """A named force field: its OpenMM files, water models (name -> file) and default water."""

    name: str
    description: str
    files: tuple
    waters: dict
    default_water: str

    def files_with_water(self, water: str | None = None) -> tuple:
        """The OpenMM XML files of this force field with water model ``water``.

        Parameters
        ----------
        water : str or None
            A key of ``waters`` (None: ``default_water``).

        Returns
        -------
        tuple of str
            File names OpenMM's ``ForceField`` finds in its data folder.

        Raises
        ------
        SettingsError
            This force field has no such water model.
        """
        water = (water or self.default_water).lower()
        if water not in self.waters:
            raise SettingsError(f"--water {water}: the {self.name} force field has "
                                f"{', '.join(self.waters)}")
        return (*self.files, self.waters[water])


FORCE_FIELDS = {
    "amber14": ForceFieldChoice("amber14", "Amber ff14SB protein, OL15 DNA, OL3 RNA, GLYCAM, lipid17",
                                ("amber14-all.xml",),
                                {"tip3p": "amber14/tip3p.xml", "opc": "amber14/opc.xml",
                                 "tip4pew": "amber14/tip4pew.xml", "spce": "amber14/spce.xml"}, "tip3p"),
    "amber19": ForceFieldChoice("amber19", "Amber ff19SB protein (with CMAP), OL21 DNA, OL3 RNA, lipid21",
                                ("amber19-all.xml",),
                                {"opc": "amber19/opc.xml", "tip3p": "amber19/tip3p.xml",
                                 "tip4pew": "amber19/tip4pew.xml", "spce": "amber19/spce.xml"}, "opc"),
    "charmm36": ForceFieldChoice("charmm36", "CHARMM36 (July 2017 release as converted for OpenMM)",
                                 ("charmm36.xml",),
                                 {"tip3p": "charmm36/water.xml", "tip4pew": "charmm36/tip4pew.xml",
                                  "spce": "charmm36/spce.xml"}, "tip3p"),
    "charmm36_2024": ForceFieldChoice("charmm36_2024", "CHARMM36m (July 2024 release as converted for "
                                      "OpenMM; NBFIX pairs such as Arg NC2 - carboxylate OC)",
                                      ("charmm36_2024.xml",),
                                      {"tip3p": "charmm36_2024/water.xml",
                                       "tip4pew": "charmm36_2024/tip4pew.xml",
                                       "spce": "charmm36_2024/spce.xml"}, "tip3p"),
}
DEFAULT_FORCE_FIELD_NAME = "amber14"
#: Water models with a virtual site (4-site): their extra particles are added to the water.
FOUR_SITE_WATERS = ("opc", "tip4pew")


def force_field_files(name: str | None = None, water: str | None = None) -> tuple:
    """The OpenMM XML files of force field ``name`` with water model ``water``.

    Parameters
    ----------
    name : str or None
        A key of :data:`FORCE_FIELDS` (None: ``amber14``).
    water : str or None
        A water model of that force field (None: its default).

    Returns
    -------
    tuple of str

    Raises
    ------
    SettingsError
        Unknown force field or water model.
    """
    key = (name or DEFAULT_FORCE_FIELD_NAME).lower()
    if key not in FORCE_FIELDS:
        raise SettingsError(f"--forcefield {name}: unknown; choose one of {', '.join(FORCE_FIELDS)} "
                            "(tessera forcefields lists them)")
    return FORCE_FIELDS[key].files_with_water(water)
