"""The house: no import cycles, imports only run downhill, the library never imports the command line.

The layers, low to high, follow the data flow (DEVELOPERS.md): shared
basics, physics, timing, light curves, hypotheses, inference, diagnosis,
report, the pipeline, the survey, the demo and, on top, the command line.
A module may import its own room and any room below it, never one above.
(A layout rule of this project, checked by walking the source: no
outside source applies.)
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "ttvkit"

#: Rooms from the bottom up; a room may import itself and the rooms before it.
LAYERS = [
    {"ttvkit._offline", "ttvkit._version", "ttvkit.errors", "ttvkit.constants", "ttvkit._linear", "ttvkit.io"},
    {"ttvkit.physics"},
    {"ttvkit.timing"},
    {"ttvkit.lightcurves"},
    {"ttvkit.hypotheses"},
    {"ttvkit.inference"},
    {"ttvkit.diagnosis"},
    {"ttvkit.report"},
    {"ttvkit.pipeline"},
    {"ttvkit.survey"},
    {"ttvkit.demo"},
    {"ttvkit.cli"},
]


def _modules() -> dict:
    out = {}
    for path in PACKAGE.rglob("*.py"):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        out[name] = path
    return out


def _imports(name: str, path: Path, modules: dict) -> set:
    """Modules of ttvkit that ``name`` imports (anywhere in the file, lazy imports included)."""
    package = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            candidates = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                module = ".".join(base + ([node.module] if node.module else []))
            else:
                module = node.module or ""
            candidates = [module] + [f"{module}.{a.name}" for a in node.names]
        else:
            continue
        for target in candidates:
            while target and target not in modules:
                target = target.rsplit(".", 1)[0] if "." in target else ""
            if target and target != name and not (path.name == "__init__.py" and target.startswith(name + ".")):
                found.add(target)
    return found


def _layer(module: str) -> int | None:
    for i, rooms in enumerate(LAYERS):
        if any(module == room or module.startswith(room + ".") for room in rooms):
            return i
    return None


@pytest.fixture(scope="module")
def graph():
    modules = _modules()
    return {name: _imports(name, path, modules) for name, path in modules.items()}


def test_every_module_has_a_room(graph):
    homeless = [m for m in graph if m != "ttvkit" and _layer(m) is None]
    assert homeless == [], f"modules outside every room of LAYERS: {homeless}"


def test_imports_run_downhill(graph):
    uphill = [f"{m} -> {t}" for m, targets in graph.items() if m != "ttvkit"
              for t in targets if t != "ttvkit" and _layer(t) > _layer(m)]
    assert uphill == [], "imports from a lower room to a higher one:\n" + "\n".join(sorted(uphill))


def test_no_import_cycles(graph):
    cycles = []
    state = {}

    def visit(node, stack):
        state[node] = "open"
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == "open":
                cycles.append(" -> ".join(stack[stack.index(nxt):] + [nxt]))
            elif nxt not in state:
                visit(nxt, stack + [nxt])
        state[node] = "done"

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])
    assert cycles == [], "import cycles:\n" + "\n".join(cycles)


def test_importing_the_library_loads_no_command_line():
    code = ("import sys, ttvkit, ttvkit.diagnosis, ttvkit.report, ttvkit.pipeline, ttvkit.lightcurves; "
            "print(sorted(m for m in sys.modules if m.startswith('ttvkit.cli')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]", out


def test_only_the_command_line_uses_argparse(graph):
    users = [str(p.relative_to(PACKAGE.parent)) for m, p in _modules().items()
             if not m.startswith("ttvkit.cli") and "argparse" in p.read_text(encoding="utf-8")]
    assert users == []
