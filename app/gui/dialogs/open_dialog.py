"""The open dialog: a PDB/mmCIF alone (built-in force field, optional hydrogens), or a PSF with
one or more parameter files and a coordinate file."""
from __future__ import annotations

import os

from PySide6.QtWidgets import (
    QButtonGroup,
    QCheckBox,
    QDialog,
    QDialogButtonBox,
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
                     ("pdb", "crd", "cor", *sorted(TRAJECTORY_SUFFIXES))) + ");;All files (*)")


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
        self.mode_builtin = QRadioButton("Structure file alone (PDB / mmCIF), built-in Amber14 force field")
        self.mode_psf = QRadioButton("PSF topology + parameter files + coordinates")
        group = QButtonGroup(self); group.addButton(self.mode_builtin); group.addButton(self.mode_psf)
        self.mode_builtin.setChecked(True)

        self.builtin_box = QGroupBox("Structure")
        self.structure = _PathField("Structure", "Structures (*.pdb *.ent *.cif *.mmcif);;All files (*)", get_folder)
        self.hydrogens = QCheckBox("Add missing hydrogens (pH 7)")
        self.extra_coords = _PathField("Other coordinates", COORDINATE_FILTER, get_folder)
        f1 = QFormLayout(self.builtin_box)
        f1.addRow("File", self.structure); f1.addRow("", self.hydrogens)
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
        fr = QFormLayout(); fr.addRow("Frame of a trajectory (0 = first)", self.frame); lay.addLayout(fr)
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

    def _enable(self) -> None:
        b = self.mode_builtin.isChecked()
        self.builtin_box.setEnabled(b); self.psf_box.setEnabled(not b)

    def spec(self) -> LoadSpec:
        if self.mode_builtin.isChecked():
            return LoadSpec(self.structure.text(), self.extra_coords.text() or None, (),
                            self.frame.value(), self.hydrogens.isChecked())
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
