"""The open dialog: a PDB/mmCIF alone (a force field bundled with OpenMM and its water model, with
the preparation options of the command line: hydrogens, repair, pH, extra force-field templates,
leaving out unmatched residues), a PSF with one or more parameter files and a coordinate file, or
a simulation setup: an Amber or GROMACS topology or a serialised OpenMM System with its
coordinates (the routes of energy.io.loaders, recognised by suffix)."""
from __future__ import annotations

import os

from PySide6.QtWidgets import (
    QButtonGroup,
    QCheckBox,
    QComboBox,
    QDialog,
    QDialogButtonBox,
    QDoubleSpinBox,
    QFileDialog,
    QFormLayout,
    QGroupBox,
    QHBoxLayout,
    QLabel,
    QLineEdit,
    QListWidget,
    QPushButton,
    QRadioButton,
    QSpinBox,
    QVBoxLayout,
    QWidget,
)

from app.state.document import LoadSpec
from energy.io.coordinates import TRAJECTORY_SUFFIXES
from energy.io.forcefields import DEFAULT_FORCE_FIELD_NAME, FORCE_FIELDS

#: File-dialog filter of coordinate files: single structures and every trajectory format the
#: engine reads (energy.io.coordinates.TRAJECTORY_SUFFIXES).
COORDINATE_FILTER = ("Coordinates (" + " ".join(f"*.{s}" for s in
                     ("pdb", "crd", "cor", *sorted(TRAJECTORY_SUFFIXES), "gz")) + ");;All files (*)")
#: Topologies of a simulation setup (energy.io.openmm_routes).
SETUP_FILTER = ("Simulation topologies (*.prmtop *.parm7 *.top *.xml);;Amber topology (*.prmtop *.parm7);;"
                "GROMACS topology (*.top);;Serialised OpenMM System (*.xml);;All files (*)")
#: Coordinates of a simulation setup: Amber restarts, .gro, PDB/mmCIF (with an OpenMM System),
#: and every trajectory format.
SETUP_COORDINATE_FILTER = ("Coordinates (" + " ".join(f"*.{s}" for s in (
    "inpcrd", "rst7", "ncrst", "restrt", "gro", "pdb", "cif", *sorted(TRAJECTORY_SUFFIXES))) + ");;All files (*)")


class _PathField(QWidget):
    def __init__(self, caption, filters, folder_getter, parent=None):
        super().__init__(parent)
        self.edit = QLineEdit()
        self.browse = QPushButton("Browse…")
        lay = QHBoxLayout(self); lay.setContentsMargins(0, 0, 0, 0)
        lay.addWidget(self.edit, 1); lay.addWidget(self.browse)
        self.browse.clicked.connect(lambda: self._pick(caption, filters, folder_getter()))

    def _pick(self, caption, filters, folder):
        path, _ = QFileDialog.getOpenFileName(self, caption, folder, filters)
        if path:
            self.edit.setText(path)

    def text(self) -> str:
        return self.edit.text().strip()


class OpenStructureDialog(QDialog):
    def __init__(self, parent=None, folder: str = "", compare: bool = False):
        super().__init__(parent)
        self.setWindowTitle("Compare with a second structure" if compare else "Open a structure")
        self.folder = folder
        get_folder = lambda: self._folder()  # noqa: E731
        self.mode_builtin = QRadioButton("Structure file alone (PDB / mmCIF), built-in Amber 14 force field")
        self.mode_psf = QRadioButton("PSF topology + parameter files + coordinates")
        self.mode_setup = QRadioButton("Simulation setup: Amber .prmtop/.parm7, GROMACS .top or "
                                       "OpenMM System .xml + coordinates")
        group = QButtonGroup(self); group.addButton(self.mode_builtin); group.addButton(self.mode_psf)
        group.addButton(self.mode_setup)
        self.mode_builtin.setChecked(True)

        self.builtin_box = QGroupBox("Structure")
        self.structure = _PathField("Structure", "Structures (*.pdb *.ent *.cif *.mmcif *.gz);;All files (*)",
                                    get_folder)
        self.hydrogens = QCheckBox("Add missing hydrogens")
        self.repair = QCheckBox("Repair: rebuild missing atoms and termini, parent residues for "
                                "modified ones, hydrogens")
        self.repair.setObjectName("repairCheck")
        self.ph = QDoubleSpinBox(); self.ph.setRange(0.0, 14.0); self.ph.setDecimals(1)
        self.ph.setSingleStep(0.5); self.ph.setValue(7.0)
        self.drop_unmatched = QCheckBox("Leave out residues that match no template")
        self.forcefield_files = QLineEdit(); self.forcefield_files.setPlaceholderText(
            "extra OpenMM force-field XML templates (optional; several separated by ';')")
        ff_browse = QPushButton("Browse…")
        ff_browse.clicked.connect(self._add_forcefield_files)
        ff_row = QHBoxLayout(); ff_row.addWidget(self.forcefield_files, 1); ff_row.addWidget(ff_browse)
        self.extra_coords = _PathField("Other coordinates", COORDINATE_FILTER, get_folder)
        self.force_field = QComboBox(); self.force_field.setObjectName("forceFieldChoice")
        for name, choice in FORCE_FIELDS.items():
            self.force_field.addItem(f"{name}: {choice.description}", name)
        self.force_field.setCurrentIndex(list(FORCE_FIELDS).index(DEFAULT_FORCE_FIELD_NAME))
        self.water = QComboBox(); self.water.setObjectName("waterChoice")
        self.force_field.currentIndexChanged.connect(self._fill_waters)
        self._fill_waters()
        f1 = QFormLayout(self.builtin_box)
        f1.addRow("File", self.structure); f1.addRow("Force field", self.force_field)
        f1.addRow("Water model", self.water); f1.addRow("", self.hydrogens); f1.addRow("", self.repair)
        f1.addRow("pH (hydrogens)", self.ph); f1.addRow("Templates", ff_row)
        f1.addRow("", self.drop_unmatched)
        f1.addRow("Other frames (optional)", self.extra_coords)

        self.psf_box = QGroupBox("PSF system")
        self.psf = _PathField("PSF", "PSF topology (*.psf);;All files (*)", get_folder)
        self.params = QListWidget(); self.params.setMaximumHeight(90)
        add = QPushButton("Add…"); remove = QPushButton("Remove")
        add.clicked.connect(self._add_params); remove.clicked.connect(
            lambda: [self.params.takeItem(self.params.row(i)) for i in self.params.selectedItems()])
        prow = QHBoxLayout(); prow.addWidget(self.params, 1)
        pcol = QVBoxLayout(); pcol.addWidget(add); pcol.addWidget(remove); pcol.addStretch(1); prow.addLayout(pcol)
        self.coords = _PathField("Coordinates", COORDINATE_FILTER, get_folder)
        f2 = QFormLayout(self.psf_box)
        f2.addRow("Topology", self.psf); f2.addRow("Parameters", prow); f2.addRow("Coordinates", self.coords)

        self.setup_box = QGroupBox("Simulation setup")
        self.setup_topology = _PathField("Topology", SETUP_FILTER, get_folder)
        self.setup_coords = _PathField("Coordinates", SETUP_COORDINATE_FILTER, get_folder)
        self.include_dirs = QLineEdit(); self.include_dirs.setPlaceholderText(
            "GROMACS #include folders (optional; several separated by ';')")
        f3 = QFormLayout(self.setup_box)
        f3.addRow("Topology", self.setup_topology); f3.addRow("Coordinates", self.setup_coords)
        f3.addRow("Include folders", self.include_dirs)

        self.frame = QSpinBox(); self.frame.setRange(0, 10_000_000)
        self.message = QLabel(""); self.message.setObjectName("errorMessage")
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Open | QDialogButtonBox.StandardButton.Cancel)
        buttons.accepted.connect(self._accept); buttons.rejected.connect(self.reject)
        lay = QVBoxLayout(self)
        lay.addWidget(self.mode_builtin); lay.addWidget(self.builtin_box)
        lay.addWidget(self.mode_psf); lay.addWidget(self.psf_box)
        lay.addWidget(self.mode_setup); lay.addWidget(self.setup_box)
        fr = QFormLayout(); lay.addLayout(fr)
        fr.addRow("Frame of a trajectory, or model of an ensemble (0 = first)", self.frame)
        lay.addWidget(self.message); lay.addWidget(buttons)
        for button in (self.mode_builtin, self.mode_psf, self.mode_setup):
            button.toggled.connect(self._enable)
        self._enable()
        self.resize(640, 0)

    def _fill_waters(self) -> None:
        choice = FORCE_FIELDS[self.force_field.currentData()]
        self.water.clear()
        for w in (choice.default_water, *(w for w in choice.waters if w != choice.default_water)):
            self.water.addItem(w + (" (default)" if w == choice.default_water else ""), w)

    def _folder(self) -> str:
        for t in (self.structure.text(), self.psf.text(), self.setup_topology.text()):
            if t:
                return os.path.dirname(t)
        return self.folder

    def _add_params(self) -> None:
        paths, _ = QFileDialog.getOpenFileNames(self, "Parameter files", self._folder(),
                                                "Parameters (*.prm *.par *.str *.inp *.rtf);;All files (*)")
        for p in paths:
            self.params.addItem(p)

    def _add_forcefield_files(self) -> None:
        paths, _ = QFileDialog.getOpenFileNames(self, "Force-field XML templates", self._folder(),
                                                "OpenMM force field (*.xml);;All files (*)")
        if paths:
            current = [p for p in self.forcefield_files.text().split(";") if p.strip()]
            self.forcefield_files.setText("; ".join(current + paths))

    def _enable(self) -> None:
        self.builtin_box.setEnabled(self.mode_builtin.isChecked())
        self.psf_box.setEnabled(self.mode_psf.isChecked())
        self.setup_box.setEnabled(self.mode_setup.isChecked())

    def spec(self) -> LoadSpec:
        if self.mode_builtin.isChecked():
            files = tuple(p.strip() for p in self.forcefield_files.text().split(";") if p.strip())
            return LoadSpec(self.structure.text(), self.extra_coords.text() or None, (),
                            self.frame.value(), self.hydrogens.isChecked(), repair=self.repair.isChecked(),
                            ph=float(self.ph.value()), forcefield_files=files,
                            drop_unmatched=self.drop_unmatched.isChecked(),
                            force_field_name=self.force_field.currentData(), water=self.water.currentData())
        if self.mode_setup.isChecked():
            dirs = tuple(p.strip() for p in self.include_dirs.text().split(";") if p.strip())
            return LoadSpec(self.setup_topology.text(), self.setup_coords.text() or None, (),
                            self.frame.value(), False, include_dirs=dirs)
        params = tuple(self.params.item(k).text() for k in range(self.params.count()))
        return LoadSpec(self.psf.text(), self.coords.text() or None, params, self.frame.value(), False)

    def _accept(self) -> None:
        s = self.spec()
        if not s.structure:
            self.message.setText("Choose a file first.")
            return
        if self.mode_psf.isChecked() and (not s.params or not s.coords):
            self.message.setText("A PSF needs at least one parameter file and a coordinate file.")
            return
        if self.mode_setup.isChecked():
            from energy.errors import EnergyError
            from energy.io.input_files import arrange_inputs
            try:  # the topology's suffix must name a route, with coordinates that fit it
                arranged = arrange_inputs([s.structure, *([s.coords] if s.coords else [])])
            except EnergyError as exc:
                self.message.setText(str(exc))
                return
            if arranged.structure != s.structure:
                self.message.setText(f"{os.path.basename(s.structure)} is not a topology: choose the "
                                     ".prmtop/.parm7, .top or System .xml first")
                return
        self.accept()
