"""The package's folders are its layers: nothing imports from a layer above its own.

Lowest first: errors (and the frozen model base); science and storage; the formulary; the case; the check
and data in; verify, course and audit; the command line and the app.  An import from a higher layer (the
engine importing the command line, say) would tie the core to a front end; this test names any such import.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "osmodose"

LAYER = {
    "errors": 0,
    "caution": 0,
    "safe_text": 0,
    "frozen": 0,
    "science": 1,
    "storage": 1,
    "formulary": 2,
    "case": 3,
    "check": 4,
    "datain": 4,
    "verify": 5,
    "course": 5,
    "audit": 5,
    "cli": 6,
    "app": 6,
    "__main__": 7,
    "__init__": 7,
}


def _part(module: str) -> str:
    """The top-level part of an osmodose module name: "check" for osmodose.check.rules."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else "__init__"


def _imports(path: Path) -> list[tuple[int, str]]:
    found = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            if node.module == "osmodose":  # from osmodose import __version__
                found += [(node.lineno, f"osmodose.{alias.name}") for alias in node.names]
            elif node.module.startswith("osmodose."):
                found.append((node.lineno, node.module))
        elif isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names if a.name.startswith("osmodose")]
    return found


def test_no_module_imports_from_a_layer_above_its_own() -> None:
    upward = []
    for path in sorted(PACKAGE.rglob("*.py")):
        relative = path.relative_to(PACKAGE)
        own = relative.parts[0].removesuffix(".py")
        for line, name in _imports(path):
            target = _part(name)
            if target == "__version__":
                continue
            if LAYER.get(target, -1) > LAYER[own]:
                upward.append(f"{relative}:{line} imports {name}")
    assert upward == []


def test_every_top_level_module_and_folder_has_a_layer() -> None:
    names = {p.name.removesuffix(".py") for p in PACKAGE.iterdir() if p.suffix == ".py" or p.is_dir()}
    assert names - {"__pycache__"} <= set(LAYER)


def _module_name(path: Path) -> str:
    relative = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(relative.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def test_module_level_imports_form_no_cycle() -> None:
    # Imports inside functions (kept out of start-up on purpose) are not edges: only what a module
    # needs to be imported at all.
    modules = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    edges: dict[str, set[str]] = {}
    for name, path in modules.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        targets = set()
        for node in tree.body:
            if isinstance(node, ast.ImportFrom) and node.module and node.level == 0 and node.module in modules:
                targets.add(node.module)
            elif isinstance(node, ast.Import):
                targets |= {a.name for a in node.names if a.name in modules}
        edges[name] = targets - {name}
    visiting: list[str] = []
    done: set[str] = set()
    cycles: list[list[str]] = []

    def visit(node: str) -> None:
        if node in done:
            return
        if node in visiting:
            cycles.append([*visiting[visiting.index(node) :], node])
            return
        visiting.append(node)
        for target in sorted(edges.get(node, ())):
            visit(target)
        visiting.pop()
        done.add(node)

    for node in sorted(edges):
        visit(node)
    assert cycles == []
