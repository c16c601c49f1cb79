"""The open dialog: a PDB/mmCIF alone (built-in force field, with the preparation options of the
command line: hydrogens, repair, pH, extra force-field templates, leaving out unmatched
residues), or a PSF with one or more parameter files and a coordinate file."""
from __future__ import annotations

import os

from PySide6.QtWidgets import (
    QButtonGroup,
    QCheckBox,
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

#: File-dialog filter of coordinate files: single structures and every trajectory format the
#: engine reads (energy.io.coordinates.TRAJECTORY_SUFFIXES).
COORDINATE_FILTER = ("Coordinates (" + " ".join(f"*.{s}" for s in
                     ("pdb", "crd", "cor", *sorted(TRAJECTORY_SUFFIXES), "gz")) + ");;All files (*)")


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
        group = QButtonGroup(self); group.addButton(self.mode_builtin); group.addButton(self.mode_psf)
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
        f1 = QFormLayout(self.builtin_box)
        f1.addRow("File", self.structure); f1.addRow("", self.hydrogens); f1.addRow("", self.repair)
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

        self.frame = QSpinBox(); self.frame.setRange(0, 10_000_000)
        self.message = QLabel(""); self.message.setObjectName("errorMessage")
        buttons = QDialogButtonBox(QDialogButtonBox.StandardButton.Open | QDialogButtonBox.StandardButton.Cancel)
        buttons.accepted.connect(self._accept); buttons.rejected.connect(self.reject)
        lay = QVBoxLayout(self)
        lay.addWidget(self.mode_builtin); lay.addWidget(self.builtin_box)
        lay.addWidget(self.mode_psf); lay.addWidget(self.psf_box)
        fr = QFormLayout(); lay.addLayout(fr)
        fr.addRow("Frame of a trajectory, or model of an ensemble (0 = first)", self.frame)
        lay.addWidget(self.message); lay.addWidget(buttons)
        self.mode_builtin.toggled.connect(self._enable)
        self._enable()
        self.resize(640, 0)

    def _folder(self) -> str:
        for t in (self.structure.text(), self.psf.text()):
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
        b = self.mode_builtin.isChecked()
        self.builtin_box.setEnabled(b); self.psf_box.setEnabled(not b)

    def spec(self) -> LoadSpec:
        if self.mode_builtin.isChecked():
            files = tuple(p.strip() for p in self.forcefield_files.text().split(";") if p.strip())
            return LoadSpec(self.structure.text(), self.extra_coords.text() or None, (),
                            self.frame.value(), self.hydrogens.isChecked(), repair=self.repair.isChecked(),
                            ph=float(self.ph.value()), forcefield_files=files,
                            drop_unmatched=self.drop_unmatched.isChecked())
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
        self.accept()
