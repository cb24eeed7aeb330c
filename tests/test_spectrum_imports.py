"""No import circle inside ``elucidate/spectrum`` (issue 16, item 4).

Every import between the package's modules, at module level or inside a
function, is read from the source with ``ast``; the modules must form a
directed acyclic graph (a topological order exists; Kahn 1962, from memory).
"""

import ast
from pathlib import Path

import elucidate.spectrum

PACKAGE = Path(elucidate.spectrum.__file__).resolve().parent


def _imports(path: Path) -> set[str]:
    """Sibling modules of ``spectrum`` that ``path`` imports (relative or absolute)."""
    siblings = {p.stem for p in PACKAGE.glob("*.py")}
    out = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level == 1:  # from .x import y / from . import x
                names = [node.module] if node.module else [a.name for a in node.names]
            elif node.level == 0 and (node.module or "").startswith("elucidate.spectrum"):
                rest = node.module[len("elucidate.spectrum"):].lstrip(".")
                names = [rest] if rest else [a.name for a in node.names]
            else:
                continue
            out.update(n.split(".")[0] for n in names if n and n.split(".")[0] in siblings)
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name.startswith("elucidate.spectrum."):
                    out.add(a.name.split(".")[2])
    return out


def _graph() -> dict[str, set[str]]:
    return {p.stem: _imports(p) - {p.stem} for p in sorted(PACKAGE.glob("*.py")) if p.stem != "__init__"}


def _cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """A cycle of the graph (as a module path), or None."""
    state: dict[str, int] = {}

    def visit(node, path):
        state[node] = 1
        for nxt in sorted(graph.get(node, ())):
            if nxt == "__init__":
                continue
            if state.get(nxt) == 1:
                return path + [node, nxt]
            if nxt not in state:
                found = visit(nxt, path + [node])
                if found:
                    return found
        state[node] = 2
        return None

    for node in sorted(graph):
        if node not in state:
            found = visit(node, [])
            if found:
                return found
    return None


def test_reader_finds_the_known_imports():
    # the check would pass vacuously if the reader missed imports
    graph = _graph()
    assert {"jcamp", "peaklist"} <= graph["peaks"]  # peaks reads JCAMP-DX files through jcamp
    assert {"peaklist", "picking", "dept"} <= graph["jcamp"]
    assert "peaklist" in graph["picking"]


def test_cycle_finder_finds_a_planted_circle():
    assert _cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}}) is not None
    assert _cycle({"a": {"b"}, "b": {"c"}, "c": set()}) is None


def test_no_import_circle_inside_spectrum():
    cycle = _cycle(_graph())
    assert cycle is None, "import circle: " + " -> ".join(cycle)
