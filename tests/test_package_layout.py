"""The package's shape (DEVELOPERS.md, "Layout"): modules small enough to read, no import
cycles between them, no configuration value naming code to import."""

from __future__ import annotations

import ast
from pathlib import Path

import bouncelike

ROOT = Path(bouncelike.__file__).parent
MAX_LINES = 500  # common practice: a module a newcomer reads in one sitting


def _modules() -> dict[str, Path]:
    out = {}
    for path in ROOT.rglob("*.py"):
        parts = list(path.relative_to(ROOT.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        out[".".join(parts)] = path
    return out


def _top_level_imports(name: str, path: Path, modules: dict[str, Path]) -> set[str]:
    """Modules imported when ``name`` is imported (module-level statements, not inside
    functions or ``if TYPE_CHECKING``)."""
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found: set[str] = set()
    for node in ast.parse(path.read_text()).body:
        if isinstance(node, ast.Import):
            found.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = package
            for _ in range(node.level - 1):
                base = base.rpartition(".")[0]
            target = (f"{base}.{node.module}" if node.module else base) if node.level \
                else node.module
            found.add(target)
            found.update(f"{target}.{a.name}" for a in node.names)
    return {m for m in found if m in modules and m != name}


def test_no_module_is_longer_than_a_sitting():
    long = {name: n for name, path in _modules().items()
            if (n := len(path.read_text().splitlines())) > MAX_LINES}
    assert not long, long


def test_no_import_cycles():
    modules = _modules()
    graph = {name: _top_level_imports(name, path, modules) for name, path in modules.items()}

    def reaches(start: str, goal: str) -> bool:
        seen, stack = set(), list(graph[start])
        while stack:
            m = stack.pop()
            if m == goal:
                return True
            if m not in seen:
                seen.add(m)
                stack.extend(graph[m])
        return False

    # a package's __init__ importing its own submodules is how packages work; a submodule
    # importing back into a module that (indirectly) imports it is a cycle
    cycles = sorted((a, b) for a in graph for b in graph[a]
                    if not a.startswith(b + ".") and not b.startswith(a + ".")
                    and reaches(b, a))
    assert not cycles, cycles


def test_no_module_imports_code_by_a_name_given_as_text():
    for name, path in _modules().items():
        text = path.read_text()
        assert "import_module(" not in text and "__import__(" not in text, name


def test_every_module_is_in_the_contributor_guides_layout():
    guide = (ROOT.parent / "DEVELOPERS.md").read_text()
    block = guide[guide.index("## Layout"):guide.index("## Conventions")]
    missing = [name for name in _modules()
               if name.count(".") >= 1 and name.rpartition(".")[2] not in block]
    assert not missing, missing
