"""The layout of core/: stage folders, imports that point one way, small modules.

Every import is counted, including imports inside functions, so a late import
cannot hide a step reaching back into an earlier one (common practice: a
layered package has an acyclic import graph).
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

CORE = Path(__file__).resolve().parents[1] / "core"

# Stage folders in data-flow order; a module may import its own stage and the
# stages before it. plan/ and search/ are siblings: neither imports the other.
RANK = {"study": 1, "derive": 2, "model": 3, "plan": 4, "search": 4,
        "confirm": 5, "maps": 6, "report": 7}
SHARED = {"errors", "cautions"}       # plain text and error types, used by every stage
TOP = {"cli", "inputs"}               # entry points: the command line and the front end
MAX_LINES = 600


def _module(path: Path) -> str:
    parts = list(path.relative_to(CORE).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _imports(path: Path) -> set[str]:
    """Modules of core that ``path`` imports, anywhere in the file."""
    module = _module(path)
    package = module.split(".")[:-1] if path.name != "__init__.py" else module.split(".")
    found = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            elif node.module and node.module.startswith("tradeoff."):
                target = node.module.removeprefix("tradeoff.")
            else:
                continue
            for alias in node.names:
                full = f"{target}.{alias.name}" if target else alias.name
                found.add(full if _exists(full) else target)
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("tradeoff."):
                    found.add(alias.name.removeprefix("tradeoff."))
    return {f for f in found if f}


def _exists(module: str) -> bool:
    path = CORE.joinpath(*module.split("."))
    return path.with_suffix(".py").is_file() or (path / "__init__.py").is_file()


def _graph() -> dict[str, set[str]]:
    return {_module(p): _imports(p) for p in CORE.rglob("*.py")
            if p.name != "__init__.py" or p.parent != CORE}


def _stage(module: str) -> str:
    return module.split(".")[0]


def test_stage_folders_exist_and_say_what_may_import_them():
    for folder in RANK:
        init = CORE / folder / "__init__.py"
        assert init.is_file(), f"core/{folder}/ is missing"
        doc = ast.get_docstring(ast.parse(init.read_text(encoding="utf-8")))
        assert doc and "May import" in doc or folder == "study", folder
        # folder __init__ files hold a docstring only: importing one module of a
        # stage must not import the whole stage
        body = ast.parse(init.read_text(encoding="utf-8")).body
        assert len(body) == 1, f"core/{folder}/__init__.py should hold only its docstring"


def test_imports_point_one_way():
    wrong = []
    for module, targets in _graph().items():
        stage = _stage(module)
        for target in targets:
            to = _stage(target)
            if to in SHARED or to == stage:
                continue
            if stage in SHARED:
                wrong.append(f"{module} -> {target} (shared modules import no stage)")
            elif to in TOP:
                wrong.append(f"{module} -> {target} (nothing imports the entry points)")
            elif stage in TOP:
                continue
            elif RANK[to] > RANK[stage] or (RANK[to] == RANK[stage] and to != stage):
                wrong.append(f"{module} -> {target}")
    assert not wrong, "imports reaching back up the data flow:\n" + "\n".join(wrong)


def test_no_import_cycles():
    graph = _graph()
    state: dict[str, int] = {}
    cycles = []

    def visit(node, path):
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if nxt not in graph:
                continue
            if state.get(nxt) == 1:
                cycles.append(" -> ".join(path[path.index(nxt):] + [nxt]))
            elif nxt not in state:
                visit(nxt, path + [nxt])
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node, [node])
    assert not cycles, "import cycles:\n" + "\n".join(cycles)


@pytest.mark.parametrize("path", sorted(CORE.rglob("*.py")), ids=lambda p: str(p.relative_to(CORE)))
def test_no_module_passes_600_lines(path):
    lines = len(path.read_text(encoding="utf-8").splitlines())
    assert lines <= MAX_LINES, f"{path.relative_to(CORE)} has {lines} lines: split it along a seam"
