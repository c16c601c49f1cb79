"""Every public function and public method of ``energy`` has a numpydoc docstring.

A project convention check (common practice: numpydoc, https://numpydoc.readthedocs.io/en/latest/format.html):
a public function or method (module-level functions and the methods of public classes, no leading
underscore, properties excepted) needs a docstring with a ``Parameters`` section when it takes
arguments besides ``self``/``cls``, and a ``Returns`` or ``Yields`` section unless it is annotated
``-> None``.  A section is its title on a line of its own, underlined with dashes, as numpydoc
writes it.  Every argument must be named in the ``Parameters`` section (``a, b : ...`` documents
both; ``*args``/``**kwargs`` are named with or without their stars).

The checker is run on the installed ``energy`` package (whatever ``import energy`` finds), and
on small source texts below, so that it is seen to flag what it must.
"""
from __future__ import annotations

import ast
import re
import textwrap
from pathlib import Path

import energy

_ENTRY = re.compile(r"^\s*(\*{0,2}[A-Za-z_][\w]*(?:\s*,\s*\*{0,2}[A-Za-z_][\w]*)*)\s*(?::|$)")


def _sections(doc: str) -> dict[str, list[str]]:
    """numpydoc sections of ``doc``: title -> the lines under its dashed underline."""
    lines = textwrap.dedent(doc).splitlines()
    out: dict[str, list[str]] = {}
    current = None
    for k, line in enumerate(lines):
        nxt = lines[k + 1].strip() if k + 1 < len(lines) else ""
        if line.strip() and nxt and set(nxt) == {"-"} and len(nxt) >= 3:
            current = line.strip()
            out[current] = []
            continue
        if current is not None and not (line.strip() and set(line.strip()) == {"-"}):
            out[current].append(line)
    return out


def _documented_names(parameter_lines: list[str]) -> set[str]:
    """Names of the entries of a Parameters section (unindented ``name : type`` lines)."""
    names = set()
    indent = min((len(ln) - len(ln.lstrip()) for ln in parameter_lines if ln.strip()), default=0)
    for line in parameter_lines:
        if line.strip() and len(line) - len(line.lstrip()) == indent:
            m = _ENTRY.match(line)
            if m:
                names.update(n.strip().lstrip("*") for n in m.group(1).split(","))
    return names


def _returns_none(fn: ast.FunctionDef) -> bool:
    return isinstance(fn.returns, ast.Constant) and fn.returns.value is None


def _public_functions(tree: ast.Module):
    for node in tree.body:
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)) and not node.name.startswith("_"):
            yield node.name, node
        if isinstance(node, ast.ClassDef) and not node.name.startswith("_"):
            for sub in node.body:
                if (isinstance(sub, (ast.FunctionDef, ast.AsyncFunctionDef)) and not sub.name.startswith("_")
                        and not any(isinstance(d, ast.Name) and d.id == "property" for d in sub.decorator_list)):
                    yield f"{node.name}.{sub.name}", sub


def problems_in(source: str) -> list[str]:
    """What is missing from the docstrings of the public functions and methods in ``source``.

    Parameters
    ----------
    source : str
        Python source text of one module.

    Returns
    -------
    list of str
        ``"line name: problem"`` for every function or method that breaks the convention.
    """
    out = []
    for name, fn in _public_functions(ast.parse(source)):
        doc = ast.get_docstring(fn) or ""
        a = fn.args
        args = [x.arg for x in (*a.posonlyargs, *a.args, *a.kwonlyargs) if x.arg not in ("self", "cls")]
        args += [x.arg for x in (a.vararg, a.kwarg) if x is not None]
        sections = _sections(doc)
        missing = []
        if not doc:
            missing.append("no docstring")
        if args and "Parameters" not in sections:
            missing.append("no Parameters section")
        elif args:
            undocumented = [x for x in args if x not in _documented_names(sections["Parameters"])]
            if undocumented:
                missing.append(f"Parameters does not name {', '.join(undocumented)}")
        if not _returns_none(fn) and "Returns" not in sections and "Yields" not in sections:
            missing.append("no Returns or Yields section")
        if missing:
            out.append(f"{fn.lineno} {name}: {'; '.join(missing)}")
    return out


def test_every_public_function_of_energy_has_numpydoc_parameters_and_returns():
    root = Path(energy.__file__).parent
    offenders = [f"{path.relative_to(root.parent)}:{problem}"
                 for path in sorted(root.rglob("*.py"))
                 for problem in problems_in(path.read_text(encoding="utf-8"))]
    assert not offenders, ("public functions/methods of energy without numpydoc sections "
                           f"({len(offenders)}):\n" + "\n".join(offenders))


def test_the_checker_flags_missing_sections_and_names():
    source = textwrap.dedent('''
        def bare(x):
            return x

        def no_returns(x):
            """Summary.

            Parameters
            ----------
            x : float
                A value.
            """
            return x

        def unnamed(x, y, *rest):
            """Summary.

            Parameters
            ----------
            x : float
                A value; y is mentioned here but has no entry.

            Returns
            -------
            float
            """
            return x

        def word_only(x):
            """Summary; Parameters and Returns in prose are not sections."""
            return x

        def _private(x):
            return x

        class Public:
            def method(self, k):
                return k

            @property
            def size(self):
                return 1

        class _Hidden:
            def method(self, k):
                return k
        ''')
    found = problems_in(source)
    assert found == [
        "2 bare: no docstring; no Parameters section; no Returns or Yields section",
        "5 no_returns: no Returns or Yields section",
        "15 unnamed: Parameters does not name y, rest",
        "29 word_only: no Parameters section; no Returns or Yields section",
        "37 Public.method: no docstring; no Parameters section; no Returns or Yields section",
    ]


def test_the_checker_accepts_a_complete_numpydoc_docstring():
    source = textwrap.dedent('''
        def energies(positions, i, j, *, box=None, **options) -> None:
            """Summary.

            Parameters
            ----------
            positions : (n_atoms, 3) float64
                Coordinates, angstrom.
            i, j : (m,) intp
                Atom indices.
            box : (6,) float or None, optional
                Unit cell.
            **options
                Passed on.
            """

        def pairs(n):
            """Summary.

            Parameters
            ----------
            n : int
                Count.

            Yields
            ------
            int
                Each index.
            """
            yield from range(n)

        def constant() -> float:
            """Summary.

            Returns
            -------
            float
                Always 1.0.
            """
            return 1.0
        ''')
    assert problems_in(source) == []
