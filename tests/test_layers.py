"""The package's layer order, enforced by parsing every module's imports.

The contributor guide promises: imports point down the layers (base <- physics <- model <-
study <- presentation), no module imports another module's private names, and presentation
only reads results (it imports no model-layer module). These checks read the source with
:mod:`ast`, so a lazy import inside a function counts as much as one at the top.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "pipeopt"

#: Every module of the package and its layer; a new module must be placed here.
LAYERS = {
    # base: errors, input kinds, units at the edge, input sections, study-file reading
    "errors": 0, "_arrays": 0, "units": 0, "fields": 0, "studyfile": 0,
    # physics
    "friction": 1, "fluid": 1, "water": 1, "catalog": 1, "pressure": 1, "surge": 1,
    "pumps": 1, "losses": 1,
    # model
    "economics": 2, "costs": 2, "duty": 2, "hydraulics": 2, "cashflow": 2, "variations": 2,
    "lifecycle": 2, "surrogate": 2, "renewal": 2, "upgrade_model": 2, "replacement": 2,
    "schedule": 2, "pumpset": 2, "profile": 2, "stations": 2,
    # study
    "inputs": 3, "candidates": 3, "feasibility": 3, "optimum": 3, "results": 3, "sizing": 3,
    "upgrade": 3, "uncertainty": 3, "verification": 3, "programme": 3, "register": 3,
    "route": 3, "longline": 3, "programme_inputs": 3,
    # presentation
    "plots": 4, "widgets": 4, "report": 4, "cli": 4, "outputs": 4, "terminal": 4,
    "programme_report": 4,
    # the network subpackage, by module
    "network": 3, "network.inputs": 3, "network.uncertainty": 3, "network.hydraulics": 1,
    "network.published": 2, "network.lifecycle": 2,
    "network.design": 2, "network.study": 3, "network.plots": 4, "network.report": 4,
}
NAMES = {0: "base", 1: "physics", 2: "model", 3: "study", 4: "presentation"}


def _modules() -> dict[str, Path]:
    out = {}
    for path in PACKAGE.rglob("*.py"):
        rel = path.relative_to(PACKAGE).with_suffix("")
        parts = rel.parts
        if parts[-1] == "__init__":
            parts = parts[:-1]
        if not parts:  # pipeopt/__init__.py: the public facade, imports lazily from anywhere
            continue
        out[".".join(parts)] = path
    return out


def _top(module: str) -> str:
    """The module's entry in LAYERS: itself when listed (a subpackage's modules), else its
    top-level module."""
    return module if module in LAYERS else module.split(".")[0]


def _imports(module: str, path: Path) -> list[tuple[str, list[str], int]]:
    """(imported pipeopt module, names imported from it, line) for every import."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module.split(".")[:-1] if path.name != "__init__.py" else module.split(".")
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - (node.level - 1)] if node.level > 1 else package
                target = ".".join([*base, node.module] if node.module else base)
            elif node.module and node.module.startswith("pipeopt."):
                target = node.module[len("pipeopt."):]
            else:
                continue
            names = [a.name for a in node.names]
            if not target:  # "from . import plots" (a module) or "from . import __version__"
                for n in names:
                    if (PACKAGE / f"{n}.py").exists() or (PACKAGE / n).is_dir():
                        found.append((n, [], node.lineno))
            else:
                found.append((target, names, node.lineno))
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("pipeopt."):
                    found.append((a.name[len("pipeopt."):], [], node.lineno))
    return found


MODULES = _modules()


def test_every_module_has_a_layer():
    missing = sorted({_top(m) for m in MODULES} - set(LAYERS))
    assert not missing, f"place these modules in a layer in tests/test_layers.py: {missing}"


@pytest.mark.parametrize("module", sorted(MODULES))
def test_imports_point_down_and_stay_public(module):
    layer = LAYERS[_top(module)]
    for target, names, line in _imports(module, MODULES[module]):
        top = _top(target)
        if top == _top(module):
            continue
        assert top in LAYERS, f"{module}:{line} imports unknown module {target}"
        assert LAYERS[top] <= layer, (
            f"{module} ({NAMES[layer]}) imports {target} ({NAMES[LAYERS[top]]}) at line "
            f"{line}: imports must point down the layers")
        private = [n for n in names if n.startswith("_") and not n.startswith("__")]
        assert not private, f"{module}:{line} imports private names {private} from {target}"
        if layer == 4:
            assert LAYERS[top] != 2, (f"{module}:{line} imports the model module {target}: "
                                      f"presentation only reads results")


@pytest.mark.parametrize("module", sorted(MODULES))
def test_no_private_attributes_of_other_modules(module):
    tree = ast.parse(MODULES[module].read_text(encoding="utf-8"))
    aliases = {}
    for node in ast.walk(tree):  # "from . import friction as fr" binds fr to a module
        if isinstance(node, ast.ImportFrom) and node.level and not node.module:
            for a in node.names:
                aliases[a.asname or a.name] = a.name
    for node in ast.walk(tree):
        if (isinstance(node, ast.Attribute) and isinstance(node.value, ast.Name)
                and node.value.id in aliases and node.attr.startswith("_")
                and not node.attr.startswith("__")):
            raise AssertionError(f"{module}:{node.lineno} uses the private "
                                 f"{aliases[node.value.id]}.{node.attr}")
