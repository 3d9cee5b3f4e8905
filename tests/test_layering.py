"""The layering contract of the 0.2 layout, checked on the source with :mod:`ast`.

Layers, lowest first (a module may import its own layer and the ones below it):

    base       errors, conventions, fileio, version
    declare    families as data, file formats, registry
    core       derivation, compiled numerics, checks, sampling
    numerics   shared numerical kernels
    analysis   critical points ... curvature (frozen results; no printing, no figures)
    present    serialisation, text, LaTeX, figures
    workflows  report bundle, demo, atlas
    cli        the command line

and beside them:

    families   ``models/`` and ``chemistry/demo/``: import only ``declare`` and base
    facade     ``bhchem/__init__.py`` and ``__main__``: may re-export from any layer but cli

Forbidden besides the order: matplotlib below ``present``; any ``_private`` name of
another bhchem module (``from x import _y`` or ``module._y``); import cycles between
modules (function-level imports included); function-level imports except of heavy
optional third-party packages, each with a ``# lazy: reason`` comment on its line.

The rules are the ones a reader can apply by looking at the folder a file is in
(common practice, after import-linter's "layers" and "forbidden" contracts, written here
with the standard library and networkx so CI needs no extra tool).
"""
from __future__ import annotations

import ast
from dataclasses import dataclass
from pathlib import Path

import networkx as nx
import pytest

ROOT = Path(__file__).resolve().parents[1]

LAYERS = ("base", "declare", "core", "numerics", "analysis", "present", "workflows", "cli")
BASE_MODULES = {"bhchem.errors", "bhchem.conventions", "bhchem.fileio", "bhchem.version"}
#: third-party packages that may be imported inside a function (heavy, needed by few paths):
#: each costs a command that does not use it measurable start-up (scipy.optimize ~0.25 s,
#: scipy.special ~0.1 s, networkx ~0.1 s, matplotlib ~0.4 s; bhchem show needs none of them)
LAZY_ALLOWED = {"matplotlib", "distributed", "dask", "pandas", "IPython", "tqdm", "mpmath",
                "scipy", "networkx"}


@dataclass(frozen=True)
class Import:
    source: str        # importing module, dotted
    target: str        # imported module, dotted (for "from m import name": m, or m.name)
    names: tuple       # names taken with "from m import ..."
    line: int
    function_level: bool
    comment: str


def module_name(path: Path, pkg_dirs: dict[str, Path]) -> str:
    for prefix, folder in pkg_dirs.items():
        try:
            rel = path.relative_to(folder)
        except ValueError:
            continue
        parts = list(rel.with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        return ".".join([prefix, *parts])
    raise ValueError(path)


def layer_of(module: str) -> str:
    if module in BASE_MODULES:
        return "base"
    if module in ("bhchem", "bhchem.__main__"):
        return "facade"
    parts = module.split(".")
    if len(parts) >= 2 and parts[1] in ("models", "demo"):
        return "families"
    if module == "bhchem.numerics" or module.startswith("bhchem.numerics."):
        return "numerics"
    if len(parts) >= 2 and parts[1] in LAYERS:
        return parts[1]
    return "unknown"


def collect_imports(pkg_dirs: dict[str, Path]) -> tuple[list[Import], dict[str, Path]]:
    modules: dict[str, Path] = {}
    for prefix, folder in pkg_dirs.items():
        for path in sorted(folder.rglob("*.py")):
            if any(part in ("__pycache__",) for part in path.parts):
                continue
            modules[module_name(path, pkg_dirs)] = path
    imports = []
    for mod, path in modules.items():
        text = path.read_text()
        lines = text.splitlines()
        tree = ast.parse(text)
        is_pkg = path.name == "__init__.py"
        for node, in_function in _walk(tree):
            if isinstance(node, ast.Import):
                for alias in node.names:
                    imports.append(Import(mod, alias.name, (), node.lineno, in_function,
                                          _comment(lines, node.lineno)))
            elif isinstance(node, ast.ImportFrom):
                base = node.module or ""
                if node.level:
                    anchor = mod.split(".") if is_pkg else mod.split(".")[:-1]
                    anchor = anchor[: len(anchor) - (node.level - 1)]
                    base = ".".join(anchor + ([base] if base else []))
                names = tuple(a.name for a in node.names)
                for name in names:
                    sub = f"{base}.{name}"
                    target = sub if sub in modules else base
                    imports.append(Import(mod, target, (name,), node.lineno, in_function,
                                          _comment(lines, node.lineno)))
    return imports, modules


def _comment(lines, lineno):
    line = lines[lineno - 1]
    return line.split("#", 1)[1].strip() if "#" in line else ""


def _walk(tree):
    """(node, inside_a_function) for every node."""
    stack = [(tree, False)]
    while stack:
        node, inside = stack.pop()
        yield node, inside
        child_inside = inside or isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef,
                                                   ast.Lambda))
        for child in ast.iter_child_nodes(node):
            stack.append((child, child_inside))


def private_attribute_uses(modules: dict[str, Path]) -> list[str]:
    """``name._private`` where ``name`` is bound to another bhchem module by an import."""
    found = []
    for mod, path in modules.items():
        tree = ast.parse(path.read_text())
        aliases = {}
        for node, _ in _walk(tree):
            if isinstance(node, ast.Import):
                for a in node.names:
                    if a.name.startswith("bhchem"):
                        aliases[a.asname or a.name.split(".")[0]] = a.name
            elif isinstance(node, ast.ImportFrom) and (node.module or "").startswith("bhchem"):
                for a in node.names:
                    full = f"{node.module}.{a.name}"
                    if full in modules:
                        aliases[a.asname or a.name] = full
        for node, _ in _walk(tree):
            if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                    and node.value.id in aliases and node.attr.startswith("_")
                    and not node.attr.startswith("__") and aliases[node.value.id] != mod):
                found.append(f"{mod}:{node.lineno} uses {aliases[node.value.id]}.{node.attr}")
    return found


def violations(pkg_dirs: dict[str, Path]) -> list[str]:
    """Every breach of the contract, one line each."""
    imports, modules = collect_imports(pkg_dirs)
    out = []
    graph = nx.DiGraph()
    graph.add_nodes_from(modules)
    for imp in imports:
        src_layer = layer_of(imp.source)
        internal = imp.target == "bhchem" or imp.target.startswith("bhchem.")
        top = imp.target.split(".")[0]
        where = f"{imp.source}:{imp.line}"
        if imp.function_level:
            if internal or top not in LAZY_ALLOWED:
                out.append(f"{where}: function-level import of {imp.target} (import it at the "
                           f"top of the module)")
            elif not imp.comment.startswith("lazy:"):
                out.append(f"{where}: function-level import of {imp.target} needs a "
                           f"'# lazy: reason' comment")
        if top == "matplotlib" and src_layer not in ("present", "workflows", "cli", "facade"):
            out.append(f"{where}: {src_layer} imports matplotlib (figures belong in present)")
        if not internal:
            continue
        for name in imp.names:
            if name.startswith("_") and not name.startswith("__"):
                out.append(f"{where}: imports the private name {name} from {imp.target}")
        tgt_layer = layer_of(imp.target)
        if imp.target in modules and imp.target != imp.source:
            graph.add_edge(imp.source, imp.target)
        if src_layer == "facade":
            if tgt_layer == "cli" and imp.source != "bhchem.__main__":
                out.append(f"{where}: the package facade imports the cli")
            continue
        if src_layer == "families":
            if tgt_layer not in ("declare", "base"):
                out.append(f"{where}: a family imports {imp.target} ({tgt_layer}); families "
                           f"import only bhchem.declare")
            continue
        if imp.target == "bhchem":
            out.append(f"{where}: imports the package facade; import the defining module")
            continue
        if tgt_layer == "families":
            if not (src_layer in ("workflows", "cli") and imp.target == "bhchem.demo"):
                out.append(f"{where}: the engine imports family data {imp.target} directly")
            continue
        if src_layer not in LAYERS or tgt_layer not in LAYERS:
            out.append(f"{where}: {imp.target} is in no layer ({tgt_layer})")
            continue
        if LAYERS.index(tgt_layer) > LAYERS.index(src_layer):
            out.append(f"{where}: {src_layer} imports {imp.target} from the higher layer "
                       f"{tgt_layer}")
    for cycle in nx.simple_cycles(graph):
        out.append("import cycle: " + " -> ".join(cycle + cycle[:1]))
    out.extend(private_attribute_uses(modules))
    return out


PACKAGE = {"bhchem.models": ROOT / "models", "bhchem": ROOT / "chemistry"}


def test_the_package_keeps_the_layering_contract():
    found = violations(PACKAGE)
    assert not found, f"{len(found)} layering violation(s):\n" + "\n".join(found)


def test_every_module_is_in_a_layer():
    _, modules = collect_imports(PACKAGE)
    unknown = [m for m in modules if layer_of(m) == "unknown"]
    assert not unknown


def _toy_package(tmp_path, files: dict[str, str]) -> dict[str, Path]:
    pkg = tmp_path / "chemistry"
    for rel, text in {"__init__.py": "", "errors.py": "", "core/__init__.py": "",
                      "analysis/__init__.py": "", "present/__init__.py": "", **files}.items():
        (pkg / rel).parent.mkdir(parents=True, exist_ok=True)
        (pkg / rel).write_text(text)
    return {"bhchem": pkg}


@pytest.mark.parametrize("files, expected", [
    ({"analysis/a.py": "from bhchem.present import plots\n", "present/plots.py": ""},
     "analysis imports bhchem.present.plots from the higher layer present"),
    ({"analysis/a.py": "import matplotlib.pyplot as plt\n"}, "analysis imports matplotlib"),
    ({"analysis/a.py": "from bhchem.analysis.b import _helper\n", "analysis/b.py": ""},
     "imports the private name _helper"),
    ({"analysis/a.py": "from bhchem.analysis import b\nb._helper()\n", "analysis/b.py": ""},
     "uses bhchem.analysis.b._helper"),
    ({"analysis/a.py": "from bhchem.analysis import b\n",
      "analysis/b.py": "def f():\n    from bhchem.analysis import a\n"},
     "import cycle"),
    ({"core/c.py": "def f():\n    import matplotlib\n"}, "needs a '# lazy: reason'"),
    ({"core/c.py": "def f():\n    from bhchem.errors import BhchemError\n"},
     "function-level import of bhchem.errors"),
])
def test_a_violation_is_caught(tmp_path, files, expected):
    """The checker is not vacuous: each kind of breach in a toy package is reported."""
    found = violations(_toy_package(tmp_path, files))
    assert any(expected in line for line in found), found


def test_a_clean_toy_package_passes(tmp_path):
    files = {"analysis/a.py": "from bhchem.core import c\n", "core/c.py": "import numpy\n",
             "present/p.py": "from bhchem.analysis.a import x\n"
                             "def draw():\n    import matplotlib  # lazy: heavy\n"}
    assert violations(_toy_package(tmp_path, files)) == []
