"""The package's layers: imports point down only, no cycles, no private names across modules.

Every module of ``planner`` is parsed (``ast``, nothing is imported) and its imports of
other ``planner`` modules are read, at module level and inside functions. The layer of each
module comes from :data:`LAYERS`; an import may go to its own layer or any layer below.
Imports inside functions are allowed only in the modules of :data:`LAZY_OK` (the command
line and the editor import the numerical core late, for start-up time), each with a
comment on the line or the one above saying why.

Run as a script (``python tests/test_layers.py``) it prints the figures of the layout:
modules and their sizes, the longest functions, cycles and upward imports.
"""

from __future__ import annotations

import ast
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
PKG = ROOT / "planner"

#: Layer of each module or package prefix, lowest first. A module takes the layer of its
#: longest matching prefix.
LAYERS: list[tuple[int, tuple[str, ...]]] = [
    (0, ("planner", "planner.errors", "planner.config", "planner.defaults", "planner.units",
         "planner.progress", "planner.jsonio", "planner.presets", "planner.autosave",
         "planner.memory")),
    (1, ("planner.dsp",)),
    (2, ("planner.model",)),
    (3, ("planner.filters",)),
    (4, ("planner.project", "planner.drivers", "planner.targets")),
    (5, ("planner.engine",)),
    (6, ("planner.edits", "planner.history", "planner.timeresp", "planner.crossovers",
         "planner.audio.wav")),
    (7, ("planner.compare", "planner.export", "planner.solve")),
    (8, ("planner.audio",)),
    (9, ("planner.present",)),
    (10, ("planner.cli", "planner.tui", "planner.__main__")),
]

#: Modules that may import inside functions (start-up time), each such line with a reason.
LAZY_OK = ("planner.cli", "planner.tui")


def module_name(path: Path) -> str:
    rel = path.relative_to(ROOT).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def layer_of(name: str) -> int:
    best, layer = -1, None
    for lv, prefixes in LAYERS:
        for p in prefixes:
            if (name == p or name.startswith(p + ".")) and len(p) > best:
                best, layer = len(p), lv
    if layer is None:
        raise AssertionError(f"{name} is in no layer of tests/test_layers.py LAYERS")
    return layer


def modules() -> dict[str, Path]:
    return {module_name(p): p for p in sorted(PKG.rglob("*.py"))}


def _resolve(mod: str, node: ast.ImportFrom, is_pkg: bool) -> str | None:
    if node.level == 0:
        return node.module
    base = mod.split(".") if is_pkg else mod.split(".")[:-1]
    base = base[: len(base) - (node.level - 1)]
    return ".".join(base + ([node.module] if node.module else []))


def imports(mods: dict[str, Path]):
    """``(importer, imported, line, in_function, names)`` for every planner import."""
    out = []
    for mod, path in mods.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        is_pkg = path.name == "__init__.py"
        func_lines = set()
        for fn in ast.walk(tree):
            if isinstance(fn, (ast.FunctionDef, ast.AsyncFunctionDef)):
                for sub in ast.walk(fn):
                    if isinstance(sub, (ast.Import, ast.ImportFrom)):
                        func_lines.add(sub.lineno)
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                for a in node.names:
                    if a.name.startswith("planner"):
                        out.append((mod, a.name, node.lineno, node.lineno in func_lines, []))
            elif isinstance(node, ast.ImportFrom):
                target = _resolve(mod, node, is_pkg)
                if not target or not target.startswith("planner"):
                    continue
                names = [a.name for a in node.names]
                # "from planner.x import y" where y is a module of planner.x
                subs = [f"{target}.{n}" for n in names if f"{target}.{n}" in mods]
                for s in subs:
                    out.append((mod, s, node.lineno, node.lineno in func_lines, []))
                rest = [n for n in names if f"{target}.{n}" not in mods]
                if rest or not subs:
                    out.append((mod, target, node.lineno, node.lineno in func_lines, rest))
    return out


def cycles(edges: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm)."""
    index, low, stack, on, out, counter = {}, {}, [], set(), [], [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on.add(v)
        for w in edges.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    sys.setrecursionlimit(10000)
    for v in list(edges):
        if v not in index:
            visit(v)
    return out


def _edges(mods, imps, top_level_only: bool = True) -> dict[str, set[str]]:
    edges: dict[str, set[str]] = {m: set() for m in mods}
    for a, b, _, in_fn, _ in imps:
        if b in mods and a != b and not (top_level_only and in_fn):
            edges[a].add(b)
    return edges


def _source_lines(path: Path) -> list[str]:
    return path.read_text(encoding="utf-8").splitlines()


def test_every_module_has_a_layer():
    for mod in modules():
        layer_of(mod)


def test_imports_point_down_only():
    mods = modules()
    up = [f"{a} (layer {layer_of(a)}) imports {b} (layer {layer_of(b)}) at line {line}"
          for a, b, line, _, _ in imports(mods) if b in mods and layer_of(b) > layer_of(a)]
    assert not up, "\n".join(up)


def test_no_import_cycles():
    mods = modules()
    found = cycles(_edges(mods, imports(mods), top_level_only=False))
    assert not found, found


def test_no_private_name_is_imported_from_another_module():
    mods = modules()
    bad = [f"{a} imports {n} from {b} (line {line})" for a, b, line, _, names in imports(mods)
           for n in names if n.startswith("_") and not n.startswith("__") and a != b]
    assert not bad, "\n".join(bad)


def test_imports_inside_functions_only_where_start_up_needs_them_with_a_reason():
    mods = modules()
    bad = []
    for a, b, line, in_fn, _ in imports(mods):
        if not in_fn:
            continue
        if not any(a == p or a.startswith(p + ".") for p in LAZY_OK):
            bad.append(f"{a}:{line} imports {b} inside a function")
            continue
        src = _source_lines(mods[a])
        # The reason stands on the line, or above the block of imports it belongs to.
        k = line - 1
        while k > 0 and src[k - 1].strip().startswith(("from ", "import ")):
            k -= 1
        above = src[k - 1] if k > 0 else ""
        if "#" not in src[line - 1] and not above.strip().startswith("#"):
            bad.append(f"{a}:{line} imports {b} inside a function without a reason comment")
    assert not bad, "\n".join(bad)


def test_the_numerical_core_never_imports_the_ui():
    # planner.dsp is pure numpy/scipy; nothing below the command line imports textual.
    for mod, path in modules().items():
        if layer_of(mod) >= 10:
            continue
        text = path.read_text(encoding="utf-8")
        assert "import textual" not in text and "from textual" not in text, mod
        if mod.startswith("planner.dsp"):
            assert "import planner.project" not in text and "open(" not in text, mod


def report() -> str:
    """Figures of the layout: cycles, upward imports, function-level imports, sizes."""
    mods = modules()
    imps = imports(mods)
    lines = []
    cyc = cycles(_edges(mods, imps, top_level_only=False))
    lines.append(f"modules: {len(mods)}; import cycles: {len(cyc)}")
    for c in cyc:
        lines.append("  cycle: " + ", ".join(c))
    up = [(a, b) for a, b, _, _, _ in imps if b in mods and layer_of(b) > layer_of(a)]
    lines.append(f"upward imports: {len(up)}")
    for a, b in sorted(set(up)):
        lines.append(f"  {a} -> {b}")
    lazy = [(a, b) for a, b, _, f, _ in imps if f]
    lines.append(f"imports inside functions: {len(lazy)} "
                 f"({sum(1 for a, _ in lazy if not a.startswith(LAZY_OK))} outside cli/tui)")
    priv = [(a, b, n) for a, b, _, _, names in imps for n in names
            if n.startswith("_") and not n.startswith("__")]
    lines.append(f"private names imported across modules: {len(priv)}")
    sizes = sorted(((len(_source_lines(p)), m) for m, p in mods.items()), reverse=True)
    lines.append("largest modules (lines): " + ", ".join(f"{m} {n}" for n, m in sizes[:8]))
    lines.append(f"modules over 400 lines: {sum(1 for n, _ in sizes if n > 400)}")
    funcs = []
    for m, p in mods.items():
        for node in ast.walk(ast.parse(p.read_text(encoding="utf-8"))):
            if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
                funcs.append((node.end_lineno - node.lineno + 1, f"{m}.{node.name}"))
    funcs.sort(reverse=True)
    lines.append(f"functions over 60 lines: {sum(1 for n, _ in funcs if n > 60)}; longest: "
                 + ", ".join(f"{f} {n}" for n, f in funcs[:6]))
    return "\n".join(lines)


if __name__ == "__main__":
    print(report())
