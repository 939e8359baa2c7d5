"""The package's layers, checked from the code's own imports (an AST walk).

A module imports only the layers listed before its own (``LAYERS``), ``fem``
and ``io`` import only ``core``, and ``errors`` is importable from every
layer.  The one exception is display delegation: a method named in
``DISPLAY_METHODS`` of a lower-layer object may import ``toolkit.report``
inside its body (``PathResult.plot`` draws through ``toolkit.report.plots``).
Below ``report`` nothing imports matplotlib at module level, and no module
imports an optional extra (the notebook stack, dask) at module level, so
``import toolkit`` works with the runtime dependencies alone.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1] / "toolkit"

#: Lowest first.  Each layer may import the layers in its set (and itself).
LAYERS = ["errors", "core", "recovery", "fem", "io", "assess", "report", "workbook", "cli"]
ALLOWED = {
    "errors": set(),
    "core": {"errors"},
    "recovery": {"errors", "core"},
    "fem": {"errors", "core"},
    "io": {"errors", "core"},
    "assess": {"errors", "core", "recovery", "fem", "io"},
    "report": {"errors", "core", "recovery", "fem", "io", "assess"},
    "workbook": {"errors", "core", "recovery", "fem", "io", "assess", "report"},
    "cli": {"errors", "core", "recovery", "fem", "io", "assess", "report", "workbook"},
}
#: The package's front door may import everything; package data holds no code of ours.
TOP = {"__init__", "__main__", "compat"}
DATA = {"data", "workbooks"}
DISPLAY_METHODS = {"plot", "__repr__", "_repr_html_", "rows", "to_dict"}
OPTIONAL = {"ipywidgets", "IPython", "nbformat", "nbclient", "nbconvert", "ipykernel", "jupyter_client",
            "traitlets", "tqdm", "dask", "distributed"}
BELOW_REPORT = set(LAYERS[: LAYERS.index("report")])


def layer_of(module: str) -> str | None:
    """Layer of a dotted ``toolkit.x.y`` module name (None outside the toolkit)."""
    parts = module.split(".")
    if parts[0] != "toolkit":
        return None
    if len(parts) == 1:
        return "__init__"
    return parts[1]


def module_name(path: Path, root: Path = ROOT) -> str:
    rel = path.relative_to(root.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__" and len(parts) > 1:
        parts = parts[:-1]
    return ".".join(parts)


def _imports(tree: ast.AST, module: str, is_package: bool):
    """(imported module, line, enclosing function name or None) for every import."""
    out = []

    def visit(node, func):
        for child in ast.iter_child_nodes(node):
            f = child.name if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef)) else func
            if isinstance(child, ast.Import):
                out.extend((a.name, child.lineno, func) for a in child.names)
            elif isinstance(child, ast.ImportFrom):
                if child.level:
                    base = module.split(".")
                    base = base if is_package else base[:-1]
                    base = base[: len(base) - (child.level - 1)]
                    target = ".".join(base + ([child.module] if child.module else []))
                else:
                    target = child.module
                out.append((target, child.lineno, func))
                # "from toolkit import report" names a module: count it as that module
                out.extend((f"toolkit.{a.name}", child.lineno, func) for a in child.names
                           if target == "toolkit" and a.name in LAYERS)
            visit(child, f)

    visit(tree, None)
    return out


def violations(sources: dict[str, str]) -> list[str]:
    """Every breach of the layer rules in ``{dotted module name: source}``."""
    found = []
    for module, source in sources.items():
        own = layer_of(module)
        is_package = source is not None and module.count(".") >= 1 and module in _PACKAGES
        tree = ast.parse(source)
        for target, line, func in _imports(tree, module, is_package):
            where = f"{module}:{line}"
            top = target.split(".")[0]
            if func is None and top in OPTIONAL:
                found.append(f"{where} imports the optional {top} at module level")
            if func is None and top == "matplotlib" and own in BELOW_REPORT:
                found.append(f"{where} imports matplotlib at module level below the report layer")
            other = layer_of(target)
            if other is None or own in TOP or other in DATA:
                continue
            if other == "__init__":
                if target == "toolkit" and own not in TOP:
                    names = _from_names(tree, line)
                    if names == {"__version__"}:
                        continue      # the version string: defined in toolkit/__init__.py, needed by reports
                    found.append(f"{where} imports the package front door (toolkit) from layer {own}")
                continue
            if other == own or other in ALLOWED.get(own, set()):
                continue
            if other == "report" and func in DISPLAY_METHODS:
                continue          # display delegation, inside the method body
            found.append(f"{where} (layer {own}) imports {target} (layer {other})"
                         + (f" inside {func}()" if func else ""))
    return found


def _from_names(tree, line):
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.lineno == line:
            return {a.name for a in node.names}
    return set()


def _sources():
    out = {}
    for p in sorted(ROOT.rglob("*.py")):
        name = module_name(p)
        out[name] = p.read_text(encoding="utf-8")
        if p.name == "__init__.py":
            _PACKAGES.add(name)
    return out


_PACKAGES: set[str] = set()


def test_every_module_belongs_to_a_layer():
    """Each module of the toolkit sits in a layer folder (or is the front door)."""
    unknown = [m for m in _sources() if layer_of(m) not in set(LAYERS) | TOP]
    assert not unknown, f"modules outside the layers: {unknown}; add them to a layer or to LAYERS"


def test_no_module_imports_a_layer_above_its_own():
    found = violations(_sources())
    assert not found, "layer rule broken:\n" + "\n".join(found)


@pytest.mark.parametrize("module, source, expected", [
    ("toolkit.core.mesh", "from toolkit.recovery.projection import project_l2\n", "imports toolkit.recovery"),
    ("toolkit.core.mesh", "from ..recovery import project_l2\n", "imports toolkit.recovery"),
    ("toolkit.fem.solver", "def f():\n    from toolkit.io import read_results\n", "inside f()"),
    ("toolkit.io.neutral", "from toolkit.assess.paths import line\n", "imports toolkit.assess"),
    ("toolkit.assess.paths", "import matplotlib.pyplot as plt\n", "matplotlib at module level"),
    ("toolkit.report.tables", "from toolkit.workbook import render\n", "imports toolkit.workbook"),
    ("toolkit.recovery.spr", "from toolkit import plots\n", "front door"),
    ("toolkit.core.mesh", "import nbformat\n", "optional nbformat"),
    ("toolkit.assess.paths", "def helper():\n    from toolkit.report import plots\n", "inside helper()"),
])
def test_an_upward_import_is_caught(module, source, expected):
    """The checker itself: each planted breach is reported (an empty report
    here would mean the layer test could never fail)."""
    found = violations({module: source})
    assert found and expected in found[0], found


@pytest.mark.parametrize("module, source", [
    ("toolkit.assess.paths", "class R:\n    def plot(self):\n        from toolkit.report.plots import f\n"),
    ("toolkit.recovery.spr", "from toolkit.core.mesh import Mesh\nfrom toolkit.errors import InputError\n"),
    ("toolkit.workbook.create", "from toolkit.report.summary import Summary\n"),
    ("toolkit.report.plots", "def f():\n    import matplotlib.pyplot as plt\n"),
])
def test_allowed_imports_pass(module, source):
    assert violations({module: source}) == []


def test_no_test_module_imports_another():
    """Shared test code lives in tests/helpers.py; a test module importing
    another runs that module's tests twice and ties them together."""
    tests = Path(__file__).resolve().parent
    found = []
    for p in sorted(tests.glob("*.py")):
        for node in ast.walk(ast.parse(p.read_text(encoding="utf-8"))):
            names = ([a.name for a in node.names] if isinstance(node, ast.Import)
                     else [node.module or ""] if isinstance(node, ast.ImportFrom) else [])
            found += [f"{p.name}:{node.lineno} imports {n}" for n in names if n.split(".")[0].startswith("test_")]
    assert not found, "\n".join(found)
