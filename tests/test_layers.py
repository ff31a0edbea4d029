"""Imports only point down the layers of DEVELOPERS.md ("Layout and layers"): a module never
imports from a layer above its own, and nothing below the faces imports the package's public face
(``hrstage/__init__``). Checked on the source (every import statement, also those inside
functions), so a new upward import fails here."""

from __future__ import annotations

import ast
from pathlib import Path

import hrstage

ROOT = Path(hrstage.__file__).parent

#: module or package (dotted, under hrstage) -> layer, as in DEVELOPERS.md
LAYERS = {
    "_version": 0, "stages": 0, "flags": 0, "columns": 0, "errors": 0,
    "models": 1, "stagemap": 2, "classifier": 3, "sptype": 4, "derive": 5, "catalog": 6,
    "engine": 7, "plot": 8, "report": 8, "cli": 8, "distributed": 8, "": 8,
}


def _layer(parts):
    return LAYERS[parts[0] if parts else ""]


def _module_parts(path):
    rel = path.relative_to(ROOT).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return parts


def _imports(path, parts):
    """Yield (line, imported module parts under hrstage) of every hrstage import in ``path``."""
    package = parts if path.name == "__init__.py" else parts[:-1]
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - (node.level - 1)]
                target = base + (node.module.split(".") if node.module else [])
                names = [] if node.module else [a.name for a in node.names]
            elif node.module and node.module.split(".")[0] == "hrstage":
                target, names = node.module.split(".")[1:], []
            else:
                continue
            if not target and names:       # "from . import x": the submodules named
                for name in names:
                    yield node.lineno, [name] if name in LAYERS else []
            else:
                yield node.lineno, target
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.split(".")[0] == "hrstage":
                    yield node.lineno, alias.name.split(".")[1:]


def test_imports_point_down():
    upward = []
    for path in sorted(ROOT.rglob("*.py")):
        parts = _module_parts(path)
        own = _layer(parts)
        for line, target in _imports(path, parts):
            if _layer(target) > own:
                upward.append(f"{path.relative_to(ROOT)}:{line} imports hrstage.{'.'.join(target)}")
    assert upward == []


def test_the_check_sees_an_upward_import(tmp_path):
    """The import walker resolves relative imports (a check that cannot fail proves nothing)."""
    fake = ROOT / "engine" / "chunk.py"
    found = dict(_imports(fake, _module_parts(fake)))
    assert ["catalog", "profiles"] in found.values()
    probe = tmp_path / "probe.py"
    probe.write_text("from .. import classify\nfrom ..cli import main\n")
    got = [t for _, t in _imports(probe, ["engine", "probe"])]
    assert got == [[], ["cli"]] and _layer(got[1]) > LAYERS["engine"]
