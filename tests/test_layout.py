"""The package's house rules, checked on the source: imports run one way, no cycles (imports
inside functions count), elicit's library never imports bayes, no private name crosses a module,
and no module passes 400 lines."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest
from conftest import ROOT

PACKAGES = ("bayes", "elicit")
MAX_LINES = 400

# bayes, bottom to top: a module may import only from its own layer or the layers below.
# elicit sits below all of bayes (its command, elicit.cli, composes the two from above).
LAYERS = (
    ("elicit",),
    (
        "bayes.errors",
        "bayes.settings",
        "bayes.threads",
        "bayes.arrays",
        "bayes.jsonable",
        "bayes.palette",
    ),
    ("bayes.problem", "bayes.distributions"),
    ("bayes.data",),
    ("bayes.engine",),
    ("bayes.results",),
    ("bayes.api",),
    ("bayes.sensitivity", "bayes.compare", "bayes.plan"),  # bayes.compare_wording too
    ("bayes.store",),
    ("bayes.report",),
    ("bayes.demo", "bayes.cli", "elicit.cli"),
    ("bayes.__init__", "elicit.__init__"),
)


def _modules() -> dict[str, Path]:
    out = {}
    for pkg in PACKAGES:
        for path in sorted((ROOT / pkg).rglob("*.py")):
            parts = path.relative_to(ROOT).with_suffix("").parts
            name = (
                ".".join(parts[:-1]) + ".__init__" if parts[-1] == "__init__" else ".".join(parts)
            )
            out[name] = path
    return out


MODULES = _modules()


def _resolve(name: str) -> str | None:
    """The project module a dotted import name refers to (a package means its __init__)."""
    if name in MODULES:
        return name
    if f"{name}.__init__" in MODULES:
        return f"{name}.__init__"
    return None


def _imports(module: str, path: Path) -> list[tuple[str, str | None, int]]:
    """(imported module, imported name or None, line) for every import, at any depth."""
    package = module.rsplit(".", 1)[0]
    out = []
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            for alias in node.names:
                target = _resolve(alias.name)
                if target:
                    out.append((target, None, node.lineno))
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join([*anchor, base] if base else anchor)
            for alias in node.names:
                sub = _resolve(f"{base}.{alias.name}")
                if sub:  # `from bayes.engine import gibbs`: the module itself
                    out.append((sub, None, node.lineno))
                elif _resolve(base):
                    out.append((_resolve(base), alias.name, node.lineno))
    return out


GRAPH = {m: _imports(m, p) for m, p in MODULES.items()}


def _layer(module: str) -> int:
    best, rank = -1, None
    for i, names in enumerate(LAYERS):
        for name in names:
            inside = module == name or module.startswith((name + ".", name + "_"))
            if inside and len(name) > best:
                best, rank = len(name), i
    assert rank is not None, f"{module} is in no layer: add it to LAYERS"
    return rank


def test_every_module_has_a_layer():
    for module in MODULES:
        _layer(module)


def test_imports_run_down_the_layers():
    wrong = [
        f"{m}:{line} imports {target} (layer {_layer(target)} above {_layer(m)})"
        for m, edges in GRAPH.items()
        for target, _, line in edges
        if _layer(target) > _layer(m)
    ]
    assert not wrong, "\n".join(wrong)


def test_elicit_library_imports_nothing_from_bayes_and_no_command_imports_another():
    wrong = []
    for m, edges in GRAPH.items():
        for target, _, line in edges:
            if m.startswith("elicit.") and m != "elicit.cli" and target.startswith("bayes"):
                wrong.append(f"{m}:{line} imports {target}")
            if m == "elicit.cli" and target.startswith("bayes.cli"):
                wrong.append(f"{m}:{line} imports the bayes command's {target}")
    assert not wrong, "\n".join(wrong)


def test_no_import_cycles():
    # Tarjan's strongly connected components over every import, function-level ones included.
    index, low, stack, on_stack, cycles = {}, {}, [], set(), []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w, _, _ in GRAPH[v]:
            if w == v:
                continue
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                cycles.append(sorted(component))

    for v in GRAPH:
        if v not in index:
            visit(v)
    assert not cycles, cycles


def test_no_private_name_is_imported_from_another_module():
    wrong = [
        f"{m}:{line} imports {name} from {target}"
        for m, edges in GRAPH.items()
        for target, name, line in edges
        if name is not None and name.startswith("_") and target != m
    ]
    assert not wrong, "\n".join(wrong)


@pytest.mark.parametrize("module", sorted(MODULES))
def test_module_size(module):
    lines = len(MODULES[module].read_text().splitlines())
    assert lines <= MAX_LINES, f"{MODULES[module]} has {lines} lines (at most {MAX_LINES})"


def test_the_checks_see_a_cycle_and_a_private_import(tmp_path):
    # The walker itself: a made-up pair of modules with a cycle and a private import.
    a, b = tmp_path / "a.py", tmp_path / "b.py"
    a.write_text("def f():\n    from bayes.b import _g\n")
    b.write_text("import bayes.a\n")
    MODULES.update({"bayes.a": a, "bayes.b": b})
    try:
        edges = {m: _imports(m, MODULES[m]) for m in ("bayes.a", "bayes.b")}
    finally:
        del MODULES["bayes.a"], MODULES["bayes.b"]
    assert edges["bayes.a"] == [("bayes.b", "_g", 2)]
    assert edges["bayes.b"] == [("bayes.a", None, 1)]
