"""One message naming every residue the built-in force field cannot match, with Tessera's options
that fix it (never the underlying library's API). Each test states the exact message."""
from __future__ import annotations

import pytest
from data import (
    ADK_OPLSAA_PDB,
    CYTOCHROME_19HC_GZ,
    NMR_NEOPETROSIAMIDE_PDB,
    OSMOPORIN_1OSM_GZ,
    PROGESTERONE_1A28_GZ,
)

from app.cli.main import main
from energy.errors import UnknownResidueError
from energy.io.builtin import load_builtin_prepared
from energy.io.preparation import PreparationOptions, PreparationRecord, _parse
from energy.io.residue_messages import LIST_CHARACTERS, grouped_listing

FF = "amber14-all.xml + amber14/tip3p.xml"


def _message(path, **options):
    with pytest.raises(UnknownResidueError) as err:
        load_builtin_prepared(path, PreparationOptions(**options))
    text = str(err.value)
    assert "Modeller" not in text and "addHydrogens" not in text  # no library API advice
    return text


def test_haem_and_acetate_listed_at_once_grouped_by_name():
    """19hc.pdb.gz (MDAnalysisTests; PDB 19HC): the issue's own example. Expected exact message:
    every HEM and ACT, by chain, name and author number, grouped with counts."""
    labels = ", ".join(f"{c}:HEM{n}" for c in "AB" for n in range(301, 310))
    assert _message(CYTOCHROME_19HC_GZ, add_hydrogens=True) == (
        f"{CYTOCHROME_19HC_GZ}: 23 residue(s) match no template of {FF}. No template: ACT x5 "
        "(A:ACT293, A:ACT294, A:ACT295, B:ACT293, B:ACT294), "
        f"HEM x18 ({labels}); give their templates with --forcefield-file FILE.xml (OpenMM "
        "force-field XML), or leave them out with --drop-unmatched.")


def test_no_hydrogens_names_the_option_and_the_ligand():
    """1a28.pdb.gz (MDAnalysisTests; PDB 1A28, no hydrogens, progesterone STR). Expected exact
    message: hydrogens are named first, the ligand with its fixes."""
    assert _message(PROGESTERONE_1A28_GZ) == (
        f"{PROGESTERONE_1A28_GZ}: 682 residue(s) match no template of {FF}. The structure has no "
        "hydrogen atoms: add them with --add-hydrogens (or --repair, which also rebuilds missing "
        "atoms). (680 of them are standard residues that need the hydrogens.) No template: STR x2 "
        "(A:STR1, B:STR2); give their templates with --forcefield-file FILE.xml (OpenMM force-field "
        "XML), or leave them out with --drop-unmatched.")


def test_modified_residue_names_repair_and_its_parent():
    """nmr_neopetrosiamide.pdb (MDAnalysisTests; PDB 2JUY): methionine sulfoxide SME 24, parent
    MET by the entry's MODRES record. Expected exact message."""
    assert _message(NMR_NEOPETROSIAMIDE_PDB) == (
        f"{NMR_NEOPETROSIAMIDE_PDB}: 1 residue(s) match no template of {FF}. Modified residues: "
        "SME x1 (A:SME24); --repair replaces them by their parents (SME->MET).")


@pytest.fixture(scope="module")
def four_site_waters(tmp_path_factory):
    """The first 5 SOL residues of adk_oplsaa.pdb (MDAnalysisTests; TIP4P water: OW, HW1, HW2 and
    the massless MW)."""
    lines = [line for line in open(ADK_OPLSAA_PDB)
             if line.startswith(("ATOM", "HETATM")) and line[17:20] == "SOL"][:20]
    path = tmp_path_factory.mktemp("tip4p") / "tip4p_waters.pdb"
    path.write_text("".join(lines) + "END\n")
    return str(path)


def test_four_site_water_gets_its_own_message_and_fix(four_site_waters):
    """Expected exact message: 4-site water said so (not 'add hydrogens'), and --repair."""
    assert _message(four_site_waters) == (
        f"{four_site_waters}: 5 residue(s) match no template of {FF}. 4-site water model: HOH x5 "
        "(HOH215, HOH216, HOH217, HOH218, HOH219) carry an extra massless site; the built-in "
        "force field uses 3-site TIP3P water, and --repair removes the extra sites.")
    system, _, _, prepared = load_builtin_prepared(four_site_waters, PreparationOptions(repair=True))
    assert system.n_atoms == 15 and len(prepared.record.virtual_sites_removed) == 5


def test_listing_is_capped_with_a_count_of_the_rest():
    """1osm.pdb.gz (MDAnalysisTests; PDB 1OSM, insertion codes): the 185 residues listed in at
    most LIST_CHARACTERS characters of labels, chain:name+number+insertion code, then '(n more)'."""
    topology = _parse(OSMOPORIN_1OSM_GZ, PreparationRecord(PreparationOptions()))[0]
    residues = list(topology.residues())
    text = grouped_listing(residues)
    shown = text.count(":")
    assert text.endswith(f" ({len(residues) - shown} more)") and 0 < shown < len(residues)
    assert len(text) <= LIST_CHARACTERS + 200  # the labels within the cap, plus names and counts
    assert text.startswith("ALA x11 (A:ALA1, A:ALA67, A:ALA79, A:ALA84, A:ALA86, A:ALA93, A:ALA133, "
                           "A:ALA137, A:ALA154, A:ALA163F, A:ALA166)")


def test_cli_prints_the_one_line_message(capsys):
    assert main(["scan", NMR_NEOPETROSIAMIDE_PDB, "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0 and "SME x1 (A:SME24); --repair replaces them" in err
