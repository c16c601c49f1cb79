"""Files given together sorted into one input route by suffix (energy.io.input_files), the
window's open dialog for simulation setups, and the one-line messages of combinations that fit
no route.  File names are invented; only suffixes (and an .xml file's first element) matter."""
from __future__ import annotations

import pytest

from energy.errors import StructureFileError
from energy.io.input_files import arrange_inputs


@pytest.fixture
def xmls(tmp_path):
    system = tmp_path / "system.xml"
    system.write_text('<?xml version="1.0" ?>\n<System openmmVersion="8.6" type="System" version="1">\n</System>\n')
    templates = tmp_path / "ligand.xml"
    templates.write_text("<ForceField>\n</ForceField>\n")
    return str(system), str(templates)


@pytest.mark.parametrize("files, expected", [
    (["run.rst7", "run.prmtop"], ("run.prmtop", "run.rst7", ())),
    (["run.parm7", "prod.nc"], ("run.parm7", "prod.nc", ())),
    (["conf.gro", "topol.top"], ("topol.top", "conf.gro", ())),
    (["a.crd", "x.str", "a.psf", "y.prm"], ("a.psf", "a.crd", ("x.str", "y.prm"))),
    (["model.pdb"], ("model.pdb", None, ())),
    (["model.pdb", "md.dcd"], ("model.pdb", "md.dcd", ())),
])
def test_dropped_files_are_sorted_by_suffix(files, expected):
    got = arrange_inputs(files)
    assert (got.structure, got.coords, got.params) == expected


def test_serialised_system_and_templates_are_told_apart(xmls):
    system, templates = xmls
    got = arrange_inputs(["model.pdb", system])
    assert (got.structure, got.coords) == (system, "model.pdb")
    got = arrange_inputs([templates, "model.pdb"])
    assert (got.structure, got.forcefield_files) == ("model.pdb", (templates,))


@pytest.mark.parametrize("files, message", [
    (["run.prmtop"], r"run.prmtop: an Amber topology needs coordinates.*files given: run.prmtop"),
    (["topol.top"], r"needs its .gro"),
    (["a.psf", "a.crd"], r"a PSF needs CHARMM-style parameter files"),
    (["prod.nc"], r"coordinates alone: add the topology"),
    (["run.tpr", "conf.gro"], r"\.tpr.*give the \.top and the \.gro"),
    (["charges.pqr"], r"not a format Tessera reads \(suffix '.pqr'\)"),
    (["a.prmtop", "b.top", "c.gro"], r"two topologies given"),
])
def test_combinations_that_fit_no_route_give_one_line(files, message):
    with pytest.raises(StructureFileError, match=message) as info:
        arrange_inputs(files)
    assert "\n" not in str(info.value)


def test_serialised_system_without_structure(xmls):
    with pytest.raises(StructureFileError, match="needs the PDB/mmCIF of its atoms"):
        arrange_inputs([xmls[0]])


def test_open_dialog_simulation_setup_and_force_field_choice(qtbot):
    """The dialog's setup mode gives a LoadSpec of topology + coordinates + include folders; the
    force-field and water choices reach the preparation options; a bad pair is one line."""
    from app.gui.dialogs.open_dialog import OpenStructureDialog
    from app.state.document import LoadSpec
    dialog = OpenStructureDialog()
    qtbot.addWidget(dialog)
    dialog.force_field.setCurrentIndex(dialog.force_field.findData("amber19"))
    dialog.water.setCurrentIndex(dialog.water.findData("tip4pew"))
    dialog.structure.edit.setText("/data/protein.pdb")
    spec = dialog.spec()
    assert (spec.force_field_name, spec.water) == ("amber19", "tip4pew")
    assert spec.preparation().force_field == ("amber19-all.xml", "amber19/tip4pew.xml")
    assert LoadSpec.from_dict(spec.as_dict()) == spec
    dialog.mode_setup.setChecked(True)
    dialog.setup_topology.edit.setText("/data/topol.top")
    dialog.setup_coords.edit.setText("/data/conf.gro")
    dialog.include_dirs.setText("/data/ff; /data/more")
    spec = dialog.spec()
    assert (spec.structure, spec.coords, spec.include_dirs) == ("/data/topol.top", "/data/conf.gro",
                                                                ("/data/ff", "/data/more"))
    assert spec.preparation().include_dirs == ("/data/ff", "/data/more")
    dialog.setup_coords.edit.setText("")
    dialog._accept()
    assert "needs its .gro" in dialog.message.text() and dialog.result() == 0


def test_dropped_files_make_a_spec():
    from app.state.document import LoadSpec
    spec = LoadSpec.from_files(["run.rst7", "run.prmtop"])
    assert (spec.structure, spec.coords) == ("run.prmtop", "run.rst7")
    with pytest.raises(StructureFileError, match="needs coordinates"):
        LoadSpec.from_files(["run.prmtop"])
