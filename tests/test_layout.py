"""The package's architecture, held by tests: imports point one way, down the layers, and no
module imports itself round a circle (counting imports inside functions too)."""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).parents[1] / "optimiser"

#: Layers from the bottom up. A module may import from its own layer or one below, never above.
LAYERS = ["formats", "parts", "physics", "inputs", "assessment", "codesign", "outputs", "cli"]


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = rel.parts[:-1] if rel.name == "__init__" else rel.parts
    return ".".join(parts)


def _imports(path: Path) -> set[str]:
    """Every optimiser module this file imports, at top level or inside a function."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    me = _module_name(path)
    package = me if path.name == "__init__.py" else me.rpartition(".")[0]
    found = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found |= {a.name for a in node.names if a.name.startswith("optimiser")}
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            if not mod.startswith("optimiser"):
                continue
            submodules = {f"{mod}.{a.name}" for a in node.names
                          if (PACKAGE.parent / Path(*f"{mod}.{a.name}".split("."))).exists()
                          or (PACKAGE.parent / Path(*f"{mod}.{a.name}".split("."))).with_suffix(".py").exists()}
            found |= submodules
            if len(submodules) < len(node.names):   # names defined in the module itself
                found.add(mod)
    return found


def _graph() -> dict[str, set[str]]:
    files = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    return {name: {m for m in _imports(path) if m in files and m != name}
            for name, path in files.items()}


def _layer(module: str) -> int | None:
    parts = module.split(".")
    if len(parts) < 2 or parts[1] == "__main__":
        return None   # the package's own __init__ / __main__: the public front door
    return LAYERS.index(parts[1])


def test_every_module_sits_in_a_layer():
    for module in _graph():
        parts = module.split(".")
        if len(parts) >= 2 and parts[1] not in ("__main__",):
            assert parts[1] in LAYERS, f"{module} is in no layer of {LAYERS}"


def test_imports_point_down_the_layers():
    wrong = []
    for module, deps in _graph().items():
        mine = _layer(module)
        if mine is None:
            continue
        wrong += [f"{module} -> {d}" for d in deps if (_layer(d) or 0) > mine]
    assert not wrong, "imports against the layers:\n" + "\n".join(sorted(wrong))


def test_no_import_circle():
    graph = _graph()
    # Tarjan's strongly connected components; a component of two or more is a circle
    index, low, stack, on, circles = {}, {}, [], set(), []

    def visit(v, counter=[0]):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                circles.append(sorted(component))

    for v in graph:
        if v not in index:
            visit(v)
    assert not circles, f"import circles: {circles}"


def test_no_module_over_600_lines_and_no_class_over_200():
    long_modules, long_classes = [], []
    for path in PACKAGE.rglob("*.py"):
        text = path.read_text(encoding="utf-8")
        if text.count("\n") > 600:
            long_modules.append(f"{_module_name(path)}: {text.count(chr(10))} lines")
        for node in ast.walk(ast.parse(text)):
            if isinstance(node, ast.ClassDef) and node.end_lineno - node.lineno + 1 > 200:
                long_classes.append(f"{_module_name(path)}.{node.name}: "
                                    f"{node.end_lineno - node.lineno + 1} lines")
    assert not long_modules and not long_classes, long_modules + long_classes


def _layout_section() -> str:
    text = (PACKAGE.parent / "DEVELOPERS.md").read_text(encoding="utf-8")
    start = text.index("## Layout")
    return text[start:text.index("\n## ", start + 1)]


def test_the_contributor_guide_lists_every_module_and_only_those():
    """DEVELOPERS.md's layout section names each module by its path under optimiser/; a row may
    list several modules of one folder, the later ones by bare file name."""
    import re

    section = _layout_section()
    named = set()
    for row in section.splitlines():
        cells = row.split("|")
        if len(cells) < 3:
            continue
        folder = None
        for item in re.findall(r"`([\w/.]+)`", cells[1]):
            if "/" in item:
                folder = item.rsplit("/", 1)[0]
                named.add(item)
            elif folder and item.endswith(".py"):
                named.add(f"{folder}/{item}")
            elif item.endswith(".py"):
                named.add(item)
    named = {n for n in named if n.endswith(".py")}
    # the report package's modules are listed inside its row
    report = re.search(r"`outputs/report/` \| ([^\n]*)", section).group(1)
    named |= {f"outputs/report/{m}" for m in re.findall(r"`(\w+\.py)`", report)}
    files = {str(p.relative_to(PACKAGE)) for p in PACKAGE.rglob("*.py")
             if p.name != "__init__.py" or p.parent == PACKAGE}
    assert files - named == set(), f"modules the guide does not list: {sorted(files - named)}"
    assert named - files == set(), f"the guide lists modules that do not exist: {sorted(named - files)}"
