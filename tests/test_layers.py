"""The architecture as a fact: imports only point down the data flow, and nothing is circular.

The allowed order is written once, here (:data:`LAYERS`), and is the picture of DESIGN.md:
ingest -> capnography/oximetry -> episodes -> analysis -> render/audit/trend -> cli. Every
``import`` in every module counts, including those inside functions (they hid two cycles).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "sedreport"

#: Layers from the bottom up; a part may import its own part or a part of a lower layer.
#: ``sedreport`` itself (the package ``__init__``) is the public face: it sits on top and
#: nothing inside the package may import it.
LAYERS: tuple[tuple[str, ...], ...] = (
    ("errors", "_version"),
    ("session",),
    ("criteria",),
    ("ingest",),
    ("oximetry",),
    ("gaps",),
    ("capnography",),
    ("episodes",),
    ("analysis",),
    ("trend", "audit", "demo"),
    ("render",),
    ("cli", "__main__"),
    ("sedreport",),
)
RANK = {part: i for i, layer in enumerate(LAYERS) for part in layer}


def module_name(path: Path, root: Path) -> str:
    rel = path.relative_to(root.parent).with_suffix("")
    parts = rel.parts[:-1] if rel.name == "__init__" else rel.parts
    return ".".join(parts)


def part_of(module: str) -> str:
    """``sedreport.capnography.breaths`` -> ``capnography``; the package itself -> itself."""
    pieces = module.split(".")
    return pieces[1] if len(pieces) > 1 else pieces[0]


def imports_of(path: Path, module: str, known: set[str]) -> set[str]:
    """Every sedreport module a file imports (absolute or relative, at any depth).

    ``from sedreport.demo import oximetry`` depends on the module ``sedreport.demo.oximetry``
    when that is a module in ``known``, else on ``sedreport.demo`` itself.
    """
    out = set()
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names if a.name.split(".")[0] == "sedreport")
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join([*anchor, base] if base else anchor)
            if base.split(".")[0] != "sedreport":
                continue
            subs = {f"{base}.{a.name}" for a in node.names} & known
            out.update(subs)
            if len(subs) < len(node.names):
                out.add(base)
    return out


def import_graph(root: Path = PACKAGE) -> dict[str, set[str]]:
    """Module -> sedreport modules it imports, for every ``.py`` file under ``root``."""
    files = {module_name(p, root): p for p in sorted(root.rglob("*.py"))}
    known = set(files)
    return {m: {d for d in imports_of(p, m, known) if d != m} for m, p in files.items()}


def upward_imports(graph: dict[str, set[str]]) -> list[str]:
    """``a -> b`` for each import from a lower or equal layer's part into another part."""
    bad = []
    for mod, deps in graph.items():
        for dep in deps:
            src, dst = part_of(mod), part_of(dep)
            if src == dst:
                continue
            if src not in RANK or dst not in RANK or RANK[dst] >= RANK[src]:
                bad.append(f"{mod} -> {dep}")
    return sorted(bad)


def find_cycle(graph: dict[str, set[str]]) -> list[str]:
    """One import cycle as a list of modules (first repeated at the end), or []."""
    state: dict[str, int] = {}  # 1 on the current path, 2 finished
    path: list[str] = []

    def visit(mod: str) -> list[str]:
        state[mod] = 1
        path.append(mod)
        for dep in sorted(graph.get(mod, ())):
            if dep not in graph:  # a package import resolved to its __init__
                continue
            if state.get(dep) == 1:
                return path[path.index(dep) :] + [dep]
            if dep not in state and (cycle := visit(dep)):
                return cycle
        path.pop()
        state[mod] = 2
        return []

    for mod in sorted(graph):
        if mod not in state and (cycle := visit(mod)):
            return cycle
    return []


@pytest.fixture(scope="module")
def graph() -> dict[str, set[str]]:
    return import_graph()


def test_every_part_has_a_layer(graph):
    assert {part_of(m) for m in graph} <= set(RANK)


def test_no_import_points_up_the_data_flow(graph):
    assert upward_imports(graph) == []


def test_no_import_cycle(graph):
    assert find_cycle(graph) == []


def test_a_planted_upward_import_is_caught(graph):
    planted = {m: set(d) for m, d in graph.items()}
    planted["sedreport.ingest.load"].add("sedreport.render.record")
    assert upward_imports(planted) == ["sedreport.ingest.load -> sedreport.render.record"]
    planted = {m: set(d) for m, d in graph.items()}
    planted["sedreport.episodes.detect"].add("sedreport.analysis")
    assert upward_imports(planted) == ["sedreport.episodes.detect -> sedreport.analysis"]


def test_a_planted_cycle_is_caught(graph):
    # The cycle that used to hide inside a function: metrics -> cycles, planted back.
    planted = {m: set(d) for m, d in graph.items()}
    planted["sedreport.capnography.cycles"].add("sedreport.capnography.metrics")
    cycle = find_cycle(planted)
    assert cycle[0] == cycle[-1]
    assert set(cycle) == {"sedreport.capnography.cycles", "sedreport.capnography.metrics"}


def test_a_cycle_through_a_package_init_is_caught(tmp_path):
    pkg = tmp_path / "sedreport"
    (pkg / "demo").mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "demo" / "__init__.py").write_text("from sedreport.demo.cohort import write_cohort\n")
    (pkg / "demo" / "cohort.py").write_text(
        "def f():\n    from sedreport.demo import case_rng\n    return case_rng\n"
    )
    cycle = find_cycle(import_graph(pkg))
    assert set(cycle) == {"sedreport.demo", "sedreport.demo.cohort"}


def test_package_inits_hold_no_logic():
    """A package ``__init__`` only re-exports (no def or class), except the lazy public face."""
    for init in PACKAGE.rglob("__init__.py"):
        if init.parent == PACKAGE:
            continue
        tree = ast.parse(init.read_text(encoding="utf-8"))
        defs = [n.name for n in tree.body if isinstance(n, ast.FunctionDef | ast.ClassDef)]
        assert defs == [], f"{init.relative_to(PACKAGE.parent)} defines {defs}"
