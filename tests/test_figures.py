"""app.figures: map PNG/SVG and the PDF report (and that energy stays free of Qt)."""
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from app import figures

ROOT = Path(__file__).resolve().parents[1]
CLASH = ROOT / "samples" / "scenario" / "complex_clash.pdb"


@pytest.fixture(scope="module")
def scenario():
    from energy.decomposition.pipeline import compute
    from energy.io.loaders import load_system
    loaded = load_system(str(CLASH))
    return loaded, compute(loaded.system, loaded.frame)


def test_map_png_and_svg(scenario, tmp_path):
    loaded, result = scenario
    png, svg = tmp_path / "m.png", tmp_path / "m.svg"
    for path in (png, svg):
        figures.save_map(path, loaded.system, result, structure=str(CLASH), frame=0)
    import matplotlib.image as mpimg
    img = mpimg.imread(png)
    assert img.ndim == 3 and img.shape[0] > 1000 and img.std() > 0.05
    root = ET.parse(svg).getroot()
    text = svg.read_text()
    assert root.tag.endswith("svg")
    assert "complex_clash.pdb" in text and "kcal/mol" in text and "no cutoff" in text


def test_map_figure_is_centred_on_zero_and_clips_by_percentile():
    m = np.zeros((5, 5)); m[0, 1] = m[1, 0] = 1e5; m[2, 3] = m[3, 2] = -0.2; m[1, 2] = m[2, 1] = 1.0
    fig = figures.map_figure(m, [f"R{k}" for k in range(5)], percentile=50)
    im = fig.axes[0].images[0]
    assert im.norm.vmin == -im.norm.vmax and im.norm.vcenter == 0.0
    assert im.norm.vmax < 1e5    # one clash does not set the scale
    assert "clipped" in fig.axes[1].get_ylabel()


def test_pdf_report(scenario, tmp_path):
    loaded, result = scenario
    s = loaded.system
    labels = [s.residues.label(i) for i in range(s.n_residues)]
    path = tmp_path / "r.pdf"
    figures.save_report(path, labels=labels, chains=list(s.residues.chain), pairs=result.residue_pairs,
                        totals=result.totals, settings=result.settings, files=[str(CLASH)],
                        title="complex_clash.pdb, frame 0")
    data = path.read_bytes()
    assert data[:5] == b"%PDF-" and data.rstrip().endswith(b"%%EOF")
    assert data.count(b"/Type /Page") >= 2


def test_failed_write_leaves_nothing(tmp_path):
    fig = figures.map_figure(np.eye(3), ["a", "b", "c"])
    with pytest.raises(ValueError, match="png"):
        figures.save_figure(fig, tmp_path / "m.bmp")
    with pytest.raises(OSError):
        figures.save_figure(figures.map_figure(np.eye(3), ["a", "b", "c"]), tmp_path / "no" / "m.png")
    assert list(tmp_path.iterdir()) == []


def test_energy_figures_and_compare_import_no_qt():
    code = ("import sys, app.figures, energy.analysis.compare, app.cli.compare; "
            "assert not any(m.startswith(('PySide6', 'pyqtgraph')) for m in sys.modules)")
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT)
