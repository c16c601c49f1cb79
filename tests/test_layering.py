"""The computation core must not import Qt (common practice: a core library usable headless)."""
import subprocess
import sys


def test_energy_core_imports_no_qt():
    code = ("import sys, energy, energy.decomposition.pipeline, app.cli.main, energy.output.report, "
            "energy.decomposition.atom_pairs, "
            "energy.io.loaders, energy.io.builtin, energy.io.charmm_system; "
            "bad = [m for m in sys.modules if m.split('.')[0] in ('PySide6', 'pyqtgraph', 'shiboken6')]; "
            "print(bad); sys.exit(1 if bad else 0)")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, proc.stdout + proc.stderr
