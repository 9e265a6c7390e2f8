"""The package's rooms show the pipeline: every import points down the flow, and no module imports itself back.

The rooms in order (`deflect/__init__.py`): errors, geometry, job, mechanics, machining, decisions, output, cli.
A module may import from its own room and from the rooms before it, never from a later one; and the modules'
imports (at the top or inside functions) form no cycle. Read from the source with `ast`, so a lazy import
inside a function counts too.
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "deflect"
ROOMS = ["errors", "geometry", "job", "mechanics", "machining", "decisions", "output", "cli"]


def module_name(path: Path) -> str:
    parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def room_of(module: str) -> str | None:
    """'deflect.machining.simulate' -> 'machining'; the package's own __init__ has no room."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else None


def imports_of(path: Path) -> set[str]:
    """Every deflect module a file imports, wherever the import stands."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            found |= {alias.name for alias in node.names if alias.name.startswith("deflect")}
        elif isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("deflect"):
            found.add(node.module)
    return found


MODULES = {module_name(path): imports_of(path) for path in PACKAGE.rglob("*.py")}


def test_every_module_lives_in_a_named_room():
    rooms = {room_of(name) for name in MODULES} - {None}
    assert rooms <= set(ROOMS), f"modules outside the rooms of the flow: {sorted(rooms - set(ROOMS))}"


def upward_imports(modules: dict[str, set[str]]) -> list[str]:
    """'a imports b' for every import from a later room of the flow."""
    upward = []
    for name, imported in modules.items():
        here = room_of(name)
        if here is None:
            continue
        for target in imported:
            there = room_of(target)
            if there is not None and ROOMS.index(there) > ROOMS.index(here):
                upward.append(f"{name} imports {target}")
    return sorted(upward)


def import_cycles(modules: dict[str, set[str]]) -> list[list[str]]:
    """Cycles of the import graph (depth-first search), each as the modules around it."""
    graph = {name: {t for t in imported if t in modules and t != name} for name, imported in modules.items()}
    cycles, done = [], set()

    def visit(node, trail):
        if node in trail:
            cycles.append(trail[trail.index(node):] + [node])
            return
        if node in done:
            return
        for nxt in sorted(graph[node]):
            visit(nxt, trail + [node])
        done.add(node)

    for start in sorted(graph):
        visit(start, [])
    return cycles


def test_imports_point_down_the_flow():
    upward = upward_imports(MODULES)
    assert not upward, "imports that run back up the flow:\n" + "\n".join(upward)


def test_no_module_imports_itself_back():
    cycles = import_cycles(MODULES)
    assert not cycles, "import cycles: " + "; ".join(" -> ".join(c) for c in cycles)


def test_the_checks_see_an_upward_import_and_a_cycle():
    # the checks themselves can fail: the old arrangement, where the pass reader imported the in-process part
    # and the in-process part imported the pass reader, is reported both ways
    old = {"deflect.job.process": {"deflect.machining.inprocess"},
           "deflect.machining.inprocess": {"deflect.job.process"}}
    assert upward_imports(old) == ["deflect.job.process imports deflect.machining.inprocess"]
    assert import_cycles(old)
