"""Compute settings: cutoff, switching, electrostatics, dielectric, LJ term form, and display units.

Changing a computation setting asks the window to recompute in the background (after a short
pause so that typing a number does not start one computation per key); the unit only rescales.
"""
from __future__ import annotations

import html

from PySide6.QtCore import QTimer, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QComboBox,
    QDoubleSpinBox,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QPushButton,
    QVBoxLayout,
    QWidget,
)

from app.gui.settings import UNITS
from app.gui.views.flow_layout import compact_combo
from app.gui.wording import in_window_terms
from energy.errors import SettingsError
from energy.model.settings import EXP6_ALPHA_MATCHING_LJ, EnergySettings
from energy.terms.registry import long_label

#: Implicit-solvent choices of the panel (key "" is in vacuo).
IMPLICIT_CHOICES = {"": "none (in vacuo)", "obc2": "GB OBC2", "gbn2": "GB GBn2"}
NONPOLAR_CHOICES = {"ace": "ACE (from Born radii)", "none": "none"}

ELECTROSTATICS = {"plain": "Plain Coulomb, ε constant", "reaction-field": "Reaction field (needs cutoff)",
                  "distance-dependent": "Distance-dependent, ε = D·r",
                  "shifted": "Shifted force, zero at the cutoff (needs cutoff)"}
VDW_MODELS = {"lj": f"{long_label('lj')} (force field)", "exp6": "exp-6, same minimum per pair"}


class ComputeSettingsPanel(QWidget):
    settingsChanged = Signal(object)   # EnergySettings, valid
    unitChanged = Signal(str)

    def __init__(self, settings: EnergySettings, unit: str, parent=None):
        super().__init__(parent)
        self._debounce = QTimer(self, singleShot=True, interval=500)
        self._debounce.timeout.connect(self._emit)
        self.use_cutoff = QCheckBox("Cutoff"); self.use_cutoff.setObjectName("useCutoff")
        self.cutoff = QDoubleSpinBox(); self.cutoff.setObjectName("cutoff")
        self.cutoff.setRange(3.0, 99.0); self.cutoff.setSingleStep(0.5); self.cutoff.setSuffix(" Å")
        self.use_switch = QCheckBox("LJ switch from"); self.use_switch.setObjectName("useSwitch")
        self.switch = QDoubleSpinBox(); self.switch.setRange(1.0, 98.0); self.switch.setSingleStep(0.5)
        self.switch.setSuffix(" Å")
        self.electrostatics = QComboBox(); self.electrostatics.setObjectName("electrostatics")
        for key, text in ELECTROSTATICS.items():
            self.electrostatics.addItem(text, key)
        self.dielectric = QDoubleSpinBox(); self.dielectric.setObjectName("dielectric")
        self.dielectric.setRange(0.1, 200.0); self.dielectric.setSingleStep(0.5); self.dielectric.setDecimals(2)
        self.solvent = QDoubleSpinBox(); self.solvent.setRange(1.0, 200.0); self.solvent.setDecimals(1)
        self.periodic = QCheckBox("Minimum image when a cell is known")
        self.vdw = QComboBox(); self.vdw.setObjectName("vdwModel")
        for key, text in VDW_MODELS.items():
            self.vdw.addItem(text, key)
        self.alpha = QDoubleSpinBox(); self.alpha.setObjectName("exp6Alpha")
        self.alpha.setRange(7.5, 40.0); self.alpha.setDecimals(3); self.alpha.setSingleStep(0.5)
        self.alpha.setToolTip(f"exp-6 steepness; {EXP6_ALPHA_MATCHING_LJ:.3f} matches the LJ curvature "
                              "at the minimum (docs/physics.md)")
        self.alpha_default = QPushButton("LJ-matched"); self.alpha_default.setObjectName("exp6AlphaDefault")
        self.alpha_default.clicked.connect(lambda: self.alpha.setValue(EXP6_ALPHA_MATCHING_LJ))
        self.implicit = QComboBox(); self.implicit.setObjectName("implicitSolvent")
        for key, text in IMPLICIT_CHOICES.items():
            self.implicit.addItem(text, key)
        self.implicit.setToolTip("Generalized Born polar solvation (docs/physics.md); Coulomb then "
                                 "uses the solute dielectric, without a reaction field")
        self.salt = QDoubleSpinBox(); self.salt.setObjectName("saltMolar")
        self.salt.setRange(0.0, 5.0); self.salt.setDecimals(3); self.salt.setSingleStep(0.05)
        self.salt.setSuffix(" M")
        self.nonpolar = QComboBox(); self.nonpolar.setObjectName("nonpolar")
        for key, text in NONPOLAR_CHOICES.items():
            self.nonpolar.addItem(text, key)
        compact_combo(self.electrostatics, 16); compact_combo(self.vdw, 16)
        compact_combo(self.implicit, 16); compact_combo(self.nonpolar, 16)
        self.unit = QComboBox(); self.unit.setObjectName("unit")
        for u in UNITS:
            self.unit.addItem(u, u)
        self.message = QLabel(""); self.message.setObjectName("settingsMessage"); self.message.setWordWrap(True)
        self.recompute = QPushButton("Recompute now"); self.recompute.setObjectName("recompute")

        form = QFormLayout()
        form.addRow(self.use_cutoff, self.cutoff)
        form.addRow(self.use_switch, self.switch)
        form.addRow("Electrostatics", self.electrostatics)
        form.addRow("Dielectric ε or D (solute)", self.dielectric)
        form.addRow("Implicit solvent", self.implicit)
        form.addRow("Solvent ε (RF or GB)", self.solvent)
        form.addRow("Salt (ionic strength)", self.salt)
        form.addRow("Nonpolar solvation", self.nonpolar)
        form.addRow("LJ term form", self.vdw)
        arow = QHBoxLayout(); arow.addWidget(self.alpha, 1); arow.addWidget(self.alpha_default)
        form.addRow("exp-6 steepness α", arow)
        form.addRow(self.periodic)
        form.addRow("Energy unit", self.unit)
        lay = QVBoxLayout(self)
        lay.addLayout(form); lay.addWidget(self.recompute); lay.addWidget(self.message); lay.addStretch(1)

        self.set_settings(settings)
        k = self.unit.findData(unit)
        self.unit.setCurrentIndex(max(0, k))
        for w in (self.use_cutoff, self.use_switch, self.periodic):
            w.toggled.connect(self._changed)
        for w in (self.cutoff, self.switch, self.dielectric, self.solvent, self.alpha, self.salt):
            w.valueChanged.connect(self._changed)
        self.electrostatics.currentIndexChanged.connect(self._changed)
        self.implicit.currentIndexChanged.connect(self._changed)
        self.nonpolar.currentIndexChanged.connect(self._changed)
        self.vdw.currentIndexChanged.connect(self._changed)
        self.unit.currentIndexChanged.connect(lambda: self.unitChanged.emit(self.unit.currentData()))
        self.recompute.clicked.connect(self._emit)

    def set_settings(self, s: EnergySettings) -> None:
        widgets = (self.use_cutoff, self.cutoff, self.use_switch, self.switch, self.electrostatics,
                   self.dielectric, self.solvent, self.periodic, self.vdw, self.alpha, self.implicit,
                   self.salt, self.nonpolar)
        for w in widgets:
            w.blockSignals(True)
        self.use_cutoff.setChecked(s.cutoff_angstrom is not None)
        self.cutoff.setValue(s.cutoff_angstrom or 12.0)
        self.use_switch.setChecked(s.switch_angstrom is not None)
        self.switch.setValue(s.switch_angstrom or 10.0)
        self.electrostatics.setCurrentIndex(self.electrostatics.findData(s.electrostatics))
        self.dielectric.setValue(s.dielectric)
        self.solvent.setValue(s.solvent_dielectric)
        self.periodic.setChecked(s.use_periodic)
        self.vdw.setCurrentIndex(self.vdw.findData(s.vdw))
        self.alpha.setValue(s.exp6_alpha)
        self.implicit.setCurrentIndex(max(0, self.implicit.findData(s.implicit_solvent or "")))
        self.salt.setValue(s.salt_molar)
        self.nonpolar.setCurrentIndex(max(0, self.nonpolar.findData(s.nonpolar)))
        for w in widgets:
            w.blockSignals(False)
        self._enable()

    def _enable(self) -> None:
        on = self.use_cutoff.isChecked()
        self.cutoff.setEnabled(on); self.use_switch.setEnabled(on)
        self.switch.setEnabled(on and self.use_switch.isChecked())
        implicit = bool(self.implicit.currentData())
        self.solvent.setEnabled(self.electrostatics.currentData() == "reaction-field" or implicit)
        self.salt.setEnabled(implicit); self.nonpolar.setEnabled(implicit)
        exp6 = self.vdw.currentData() == "exp6"
        self.alpha.setEnabled(exp6); self.alpha_default.setEnabled(exp6)

    def current(self) -> EnergySettings:
        """Raises SettingsError for an invalid combination."""
        cut = self.cutoff.value() if self.use_cutoff.isChecked() else None
        sw = self.switch.value() if cut is not None and self.use_switch.isChecked() else None
        return EnergySettings(cutoff_angstrom=cut, switch_angstrom=sw,
                              electrostatics=self.electrostatics.currentData(),
                              dielectric=self.dielectric.value(),
                              solvent_dielectric=self.solvent.value(),
                              use_periodic=self.periodic.isChecked(),
                              vdw=self.vdw.currentData(), exp6_alpha=self._alpha(),
                              implicit_solvent=self.implicit.currentData() or None,
                              salt_molar=self.salt.value(), nonpolar=self.nonpolar.currentData())

    def _alpha(self) -> float:
        """The spin box shows 3 decimals; the LJ-matched value is kept exact."""
        a = self.alpha.value()
        return EXP6_ALPHA_MATCHING_LJ if abs(a - EXP6_ALPHA_MATCHING_LJ) < 5e-4 else a

    def _changed(self) -> None:
        self._enable()
        self._debounce.start()

    def _emit(self) -> None:
        self._debounce.stop()
        try:
            s = self.current()
        except SettingsError as exc:
            self.message.setText(f"<span style='color:#b2182b'>{html.escape(in_window_terms(str(exc)))}</span>")
            return
        self.message.setText(s.describe())
        self.settingsChanged.emit(s)
