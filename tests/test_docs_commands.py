"""Every `tessera` command of the README and the docs runs as a newcomer would type it, and the
residue labels the text quotes are ones the output gives.

The reference is the output of the commands themselves against the prose around them: the
residue labels a section quotes (``A:ALA25``, ``B:TRP33``...) must each appear in what that
section's commands print or write, and every ``--pairs I-J`` must name residues the text quotes.
The scenario's planted facts (clash, salt bridge) come from samples/scenario/scenario.json, the
invented demo data.  Commands whose inputs are placeholders of the reader's own files are listed
in NOT_RUNNABLE with the reason, and the test checks that list stays exact.
"""
from __future__ import annotations

import json
import re
import shlex
from pathlib import Path

import pytest

from app.cli.main import main

ROOT = Path(__file__).resolve().parents[1]
#: document -> (first line of the section whose prose is checked, first line after it)
SECTIONS = {
    "README.md": ("## Walkthrough: the demo scenario", "## Preparing deposited structures"),
    "docs/clashes.md": ("## What it finds on the bundled scenario", None),
    "docs/trajectories.md": ("# Trajectories", "## Stopping: Ctrl-C"),
}
#: Commands that cannot run here, by a word of theirs, and why.
NOT_RUNNABLE = {
    "model.pdb": "the reader's own structure without hydrogens (a placeholder name)",
    "adk.psf": "the reader's own PSF, parameters and trajectory (placeholder names)",
    "/shared/": "a Dask cluster on a shared file system",
    "$D/1a28": "PDB 1A28 from MDAnalysisTests with --repair: minutes; tests/test_repair.py runs it",
    "view ": "opens the window (tests/gui/ cover it)",
}
LABEL = re.compile(r"\b[A-Z]:[A-Z]{3}\d+\b")


def _section(doc: str) -> str:
    text = (ROOT / doc).read_text(encoding="utf-8")
    start, end = SECTIONS[doc]
    i = text.index(start)
    j = text.index(end, i) if end else len(text)
    return text[i:j]


def _commands(text: str) -> list[str]:
    """The `tessera` command lines of the text's code blocks, continuation lines joined."""
    out, blocks = [], re.findall(r"```[a-z]*\n(.*?)```", text, flags=re.S)
    for block in blocks:
        joined = re.sub(r"\\\n\s*", " ", block)
        for line in joined.splitlines():
            line = line.strip().removeprefix("$ ")
            if line.startswith((".venv/bin/tessera ", "tessera ")):
                out.append(line.split(" ", 1)[1])
    # commands quoted in the prose, on the bundled samples
    out += [c.split(" ", 1)[1] for c in re.findall(r"`((?:\.venv/bin/)?tessera [^`]*samples/[^`]*)`", text)]
    return out


def _runnable(command: str) -> bool:
    return not any(word in command for word in NOT_RUNNABLE)


def _run(command: str, cwd: Path, capsys) -> str:
    argv = [str(ROOT / a) if a.startswith("samples/") else a for a in shlex.split(command)]
    before = set(cwd.rglob("*"))
    code = main(argv)
    out = capsys.readouterr()
    assert code == 0, f"tessera {command}: exit {code}\n{out.err}"
    written = "".join(p.read_text(errors="replace") for p in set(cwd.rglob("*")) - before
                      if p.is_file() and p.suffix in (".json", ".csv"))
    return out.out + written


def test_the_list_of_commands_that_cannot_run_here_is_exact():
    commands = [c for doc in SECTIONS for c in _commands((ROOT / doc).read_text(encoding="utf-8"))]
    skipped = {word for word in NOT_RUNNABLE if any(word in c for c in commands)}
    assert skipped == set(NOT_RUNNABLE)
    assert sum(_runnable(c) for c in commands) >= 8


@pytest.mark.parametrize("doc", list(SECTIONS))
def test_documented_commands_run_and_give_the_residues_the_text_names(doc, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    text = _section(doc)
    if doc == "README.md":          # the walkthrough's commands and the headless ones
        text += (ROOT / "README.md").read_text(encoding="utf-8").split("## Headless commands")[1].split("\n## ")[0]
    commands = [c for c in _commands(text) if _runnable(c)]
    assert commands, doc
    output = ""
    for command in commands:
        output += _run(command, tmp_path, capsys)
    prose = re.sub(r"```.*?```", "", text, flags=re.S)
    quoted = set(LABEL.findall(prose)) | set(LABEL.findall(" ".join(re.findall(r"#.*", text))))
    assert quoted, doc
    missing = sorted(label for label in quoted if label not in output)
    assert not missing, f"{doc} names {missing}, which its commands' output does not give"
    # every --pairs I-J names residues the text quotes (0-based indices of the JSON's residues)
    for command in commands:
        for i, j in re.findall(r"--pairs (\d+)-(\d+)", command):
            out_json = shlex.split(command)[shlex.split(command).index("--json") + 1]
            labels = [f"{r['chain']}:{r['resname']}{r['resid']}{r['icode']}"
                      for r in json.loads((tmp_path / out_json).read_text())["residues"]]
            assert labels[int(i)] in text and labels[int(j)] in text, (doc, i, j, labels[int(i)], labels[int(j)])
