"""The bad-input catalogue: one small damaged file per class of damage, each with the exact
message Tessera gives (issue 14).

The files and ``catalogue.json`` are written by ``tests/bad_inputs/make_catalogue.py`` from an
invented two-water base; the expected messages are a regression snapshot of Tessera's own output,
reviewed by hand against the damage each file carries (the damage is the outside fact: the file
really lacks its !NBOND section, really holds ``1_000``, ...).  The README's troubleshooting
section is generated from the catalogue (``scripts/troubleshooting.py``).
"""
import importlib.util
import json
from pathlib import Path

import pytest

from energy.errors import MESSAGE_CAP

ROOT = Path(__file__).resolve().parents[1]
HERE = ROOT / "tests" / "bad_inputs"


def _module(path: Path, name: str):
    spec = importlib.util.spec_from_file_location(name, path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


make_catalogue = _module(HERE / "make_catalogue.py", "make_catalogue")
troubleshooting = _module(ROOT / "scripts" / "troubleshooting.py", "troubleshooting")
ENTRIES = json.loads((HERE / "catalogue.json").read_text(encoding="utf-8"))


def test_catalogue_has_one_file_per_class_and_is_what_the_generator_writes():
    assert len(ENTRIES) >= 30
    assert len({e["class"] for e in ENTRIES}) == len(ENTRIES)
    assert ENTRIES == make_catalogue.catalogue()
    for name, _what, make, *_ in make_catalogue.CASES:
        content = make()
        on_disk = (HERE / name).read_bytes()
        assert on_disk == (content if isinstance(content, bytes) else content.encode("utf-8")), name


@pytest.mark.parametrize("entry", ENTRIES, ids=[Path(e["file"]).name for e in ENTRIES])
def test_each_bad_input_gives_its_exact_message(entry, monkeypatch):
    monkeypatch.chdir(ROOT)  # the messages name the files by their paths from the root
    message = make_catalogue.run_entry(entry)
    assert message == entry["message"]
    assert len(message) <= MESSAGE_CAP and "\n" not in message and message.isprintable()


def test_readme_troubleshooting_section_is_generated_from_the_catalogue():
    section = troubleshooting.current_section((ROOT / "README.md").read_text(encoding="utf-8"))
    assert section == troubleshooting.render(), "run: python scripts/troubleshooting.py"
    for entry in ENTRIES:
        assert entry["cause"] in section
