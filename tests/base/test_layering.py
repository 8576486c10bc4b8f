"""The package's import graph: stage order, no cycles, no private imports, light CLI start-up.

Every ``import`` in ``src/stillhook`` is read with ``ast`` (also imports inside functions), so a
cycle hidden in a function body is found too.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from importlib import resources
from pathlib import Path

import pytest

from tests.paths import REPO_ROOT

PACKAGE = Path(str(resources.files("stillhook")))

#: Stage order, data flow first to last. A module may import its own stage and earlier stages only;
#: stages on the same rank are siblings and may not import each other.
STAGES = {
    "stillhook.version": 0, "stillhook.errors": 0, "stillhook.cautions": 0, "stillhook.checks": 1,
    "stillhook.lazy": 1, "stillhook.outputs": 1, "stillhook.fixed_point": 1, "stillhook.workers": 1,
    "stillhook.solvers": 1,
    "stillhook.model": 2, "stillhook.project": 3, "stillhook.sim": 4,
    "stillhook.shaping": 5, "stillhook.notch": 5, "stillhook.feedback": 5,
    "stillhook.firmware": 6, "stillhook.study": 6, "stillhook.commission": 6, "stillhook.report": 7, "stillhook.cli": 8,
    "stillhook.__main__": 9, "stillhook": 9,
}
#: Modules that later stages use but that may not import the rest of their own stage package.
LAST_IN_STAGE = {"stillhook.report.demo"}
#: Imports too slow for command start-up; only a command's ``run`` may pull them in.
HEAVY = ("scipy", "matplotlib", "control", "cffi")


def module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def stage_of(module: str) -> tuple[str, int]:
    for key in sorted(STAGES, key=len, reverse=True):
        if module == key or module.startswith(key + "."):
            return key, STAGES[key]
    raise KeyError(f"{module} belongs to no stage; add it to STAGES")


def imports_of(path: Path) -> list[tuple[str, int, bool, list[str]]]:
    """(module imported, line, inside a function, names imported) for every stillhook import."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    inner = {id(n) for f in ast.walk(tree) if isinstance(f, (ast.FunctionDef, ast.AsyncFunctionDef))
             for n in ast.walk(f) if n is not f}
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(a.name, node.lineno, id(node) in inner, []) for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names = [a.name for a in node.names]
            out.append((node.module, node.lineno, id(node) in inner, names))
            # "from stillhook.x import y" may import the module stillhook.x.y
            out += [(f"{node.module}.{n}", node.lineno, id(node) in inner, []) for n in names
                    if (PACKAGE.parent / f"{node.module}.{n}".replace(".", "/")).with_suffix(".py").exists()
                    or (PACKAGE.parent / f"{node.module}.{n}".replace(".", "/") / "__init__.py").exists()]
    return out


MODULES = {module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def graph() -> dict[str, set[str]]:
    g = {m: set() for m in MODULES}
    for m, path in MODULES.items():
        for target, _line, _inner, _names in imports_of(path):
            if target in MODULES and target != m:
                g[m].add(target)
    return g


def test_every_module_belongs_to_a_stage():
    assert all(stage_of(m) for m in MODULES)  # stage_of raises KeyError naming a module in no stage


def test_imports_follow_the_stage_order():
    bad = []
    for m, path in MODULES.items():
        if m in ("stillhook", "stillhook.__main__"):
            continue
        key, rank = stage_of(m)
        for target, line, _inner, _names in imports_of(path):
            if not target.startswith("stillhook") or target not in MODULES:
                continue
            tkey, trank = stage_of(target)
            if trank > rank or (trank == rank and tkey != key):
                bad.append(f"{path.name}:{line} ({key}) imports {target} ({tkey})")
            if target in LAST_IN_STAGE and m != target and tkey == key:
                bad.append(f"{path.name}:{line} imports {target}, which only later stages may use")
    assert not bad, "imports against the stage order:\n" + "\n".join(bad)


def test_no_import_cycles():
    g = graph()
    index, low, stack, on, cycles = {}, {}, [], set(), []

    def visit(v):  # Tarjan's strongly connected components
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in sorted(g[v]):
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
                cycles.append(sorted(comp))

    for v in sorted(g):
        if v not in index:
            visit(v)
    # a package's __init__ importing its own modules is not a cycle worth reporting unless they import it back
    assert not cycles, f"import cycles: {cycles}"


def test_library_imports_at_module_level_only():
    """Heavy imports are kept off start-up by the CLI's ``run`` functions, not by hiding them in functions."""
    bad = [f"{path.relative_to(PACKAGE)}:{line} imports {t} inside a function"
           for m, path in MODULES.items() if not m.startswith("stillhook.cli") and m != "stillhook"
           for t, line, inner, _ in imports_of(path) if inner]
    assert not bad, "\n".join(bad)


def test_cli_modules_import_only_light_modules_at_module_level():
    allowed = ("stillhook.cli", "stillhook.errors", "stillhook.version", "stillhook.cautions")
    bad = []
    for m, path in MODULES.items():
        if not m.startswith("stillhook.cli"):
            continue
        for t, line, inner, _ in imports_of(path):
            if inner or not (t.startswith("stillhook") or t.split(".")[0] in HEAVY or t == "numpy"):
                continue
            if not t.startswith(allowed):
                bad.append(f"{path.name}:{line} imports {t} at module level")
    assert not bad, "\n".join(bad)


def test_no_private_name_is_imported_from_another_module():
    bad = []
    for root in (PACKAGE, REPO_ROOT / "tests"):
        for path in root.rglob("*.py"):
            for t, line, _inner, names in imports_of(path):
                private = [n for n in names if n.startswith("_") and not n.startswith("__")]
                if t.startswith("stillhook") and private:
                    bad.append(f"{path.name}:{line} imports {private} from {t}")
    assert not bad, "\n".join(bad)


def test_every_subpackage_declares_what_it_offers():
    for init in sorted(PACKAGE.glob("*/__init__.py")):
        tree = ast.parse(init.read_text(encoding="utf-8"))
        names = [t.id for n in tree.body if isinstance(n, ast.Assign) for t in n.targets if isinstance(t, ast.Name)]
        assert "__all__" in names, f"{init.parent.name}/__init__.py has no __all__"


@pytest.mark.parametrize("argv", [["--help"], ["modes", "demo"]])
def test_light_commands_do_not_load_heavy_libraries(argv):
    # `modes` solves an eigenproblem with scipy.linalg; nothing else heavy may load
    allowed = () if argv == ["--help"] else ("scipy",)
    code = ("import sys, contextlib, io\n"
            "from stillhook.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()):\n"
            f"    try: main({argv!r})\n"
            "    except SystemExit: pass\n"
            f"print(sorted(m for m in sys.modules if m.split('.')[0] in {HEAVY!r} "
            f"and m.split('.')[0] not in {allowed!r}))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip().splitlines()[-1] == "[]", f"stillhook {' '.join(argv)} loaded {out.strip()}"


#: Too slow to load for what the commands use them for (scipy.signal: ~0.5-1 s of array-API doc machinery;
#: python-control imports it and more): our own SOS filter, decimator and DARE gains replace them.
AVOIDABLE = ("scipy.signal", "control")
#: The python-control views of the rig and of the notch cascade: the only modules that may load them.
CONTROL_VIEWS = ("stillhook.model.statespace", "stillhook.notch.transfer")


def _loaded(modules: list[str]) -> list[str]:
    """Which of AVOIDABLE are among ``modules`` (a package counts when any of its submodules is)."""
    return sorted({a for a in AVOIDABLE for m in modules if m == a or m.startswith(a + ".")})


def test_library_loads_scipy_signal_and_control_only_for_the_control_views():
    # every library module but the two python-control views, imported in a fresh process
    wanted = sorted(m for m in MODULES if m not in CONTROL_VIEWS and not m.startswith("stillhook.cli")
                    and m != "stillhook.__main__")
    code = (f"import importlib, sys\nfor m in {wanted!r}: importlib.import_module(m)\n"
            "print(sorted(sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    loaded = _loaded(ast.literal_eval(out.strip().splitlines()[-1]))
    assert loaded == [], f"importing the library (without {CONTROL_VIEWS}) loaded {loaded}"


def test_compare_demo_loads_neither_scipy_signal_nor_control():
    code = ("import sys, contextlib, io\n"
            "from stillhook.cli import main\n"
            "with contextlib.redirect_stdout(io.StringIO()) as buf:\n"
            "    main(['compare', 'demo', '--json'])\n"
            "assert buf.getvalue().lstrip().startswith('{'), buf.getvalue()[:200]\n"
            "print(sorted(sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    modules = ast.literal_eval(out.strip().splitlines()[-1])
    assert "stillhook.study.compare" in modules and "highspy" in modules  # the command really ran (the design's LPs)
    assert "scipy.optimize" not in modules  # ~0.2 s of import: the shaping path does without it
    assert _loaded(modules) == [], f"stillhook compare demo --json loaded {_loaded(modules)}"
