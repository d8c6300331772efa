"""The package's shape: floors that data flow up through, no import cycles, private names
kept inside their subpackage, and subpackages that offer what their modules offer.

The floors are those of DEVELOPERS.md ("Layout"). A module may import from its own floor
(its own subpackage, or a sibling subpackage on the same floor only where the table says so)
and from any floor below; never from above. The test reads the imports with :mod:`ast`, so
it sees imports inside functions too (the lazy ones), which an import-time check would miss.
"""
from __future__ import annotations

import ast
import importlib
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "spotkit"

# floor number of each top-level unit (a subpackage or a top-level module); a unit imports
# only from floors strictly below its own, or from itself. Mirrors DEVELOPERS.md.
FLOORS = {
    "columns": 0, "errors": 0, "units": 0, "_validate": 0,
    "bands": 1,
    "geo": 2, "stats": 2,
    "io": 3,
    "compare": 4, "coverage": 4,
    "sim": 5, "monitor": 5,
    "plan": 6,
    "viz": 7, "distributed": 7,
    "report": 8,
    "demo": 9,
    "cli": 10,
    "__init__": 11, "__main__": 11,
}
# ground-floor modules that import each other, lowest first (imports go right to left)
GROUND_ORDER = ["errors", "_validate", "columns", "units"]


def _modules():
    return sorted(p for p in PACKAGE.rglob("*.py"))


def _unit(path: Path) -> str:
    rel = path.relative_to(PACKAGE)
    return rel.parts[0] if len(rel.parts) > 1 else rel.stem


def _dotted(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path):
    """(line, imported module, imported names) of every spotkit import in a file."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    here = _dotted(path).split(".")
    if path.name != "__init__.py":
        here = here[:-1]
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = here[: len(here) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            if mod == "spotkit" or mod.startswith("spotkit."):
                yield node.lineno, mod, [a.name for a in node.names]
        elif isinstance(node, ast.Import):
            for a in node.names:
                if a.name == "spotkit" or a.name.startswith("spotkit."):
                    yield node.lineno, a.name, []


def _target_units(mod: str, names: list[str]) -> list[str]:
    parts = mod.split(".")
    if len(parts) > 1:
        return [parts[1]]
    # "from spotkit import x, y": each name is a unit (or __version__ from __init__)
    return [n if n in FLOORS else "__init__" for n in names]


def test_every_unit_has_a_floor():
    units = {_unit(p) for p in _modules()}
    assert units <= set(FLOORS), f"add {sorted(units - set(FLOORS))} to FLOORS and DEVELOPERS.md"


def test_no_module_imports_from_a_higher_floor():
    bad = []
    for path in _modules():
        unit = _unit(path)
        for line, mod, names in _imports(path):
            for target in _target_units(mod, names):
                if target == unit:
                    continue
                if target == "__init__" and names == ["__version__"]:
                    continue  # the version lives in spotkit/__init__.py and imports nothing
                ok = FLOORS[target] < FLOORS[unit]
                if FLOORS[target] == FLOORS[unit] == 0:
                    ok = GROUND_ORDER.index(target) < GROUND_ORDER.index(unit)
                if not ok:
                    bad.append(f"{path.relative_to(PACKAGE.parent)}:{line} ({unit}, floor "
                               f"{FLOORS[unit]}) imports {mod} ({target}, floor {FLOORS[target]})")
    assert not bad, "imports going up or sideways:\n" + "\n".join(bad)


def test_no_private_name_crosses_a_subpackage():
    bad = []
    for path in _modules():
        unit = _unit(path)
        for line, mod, names in _imports(path):
            parts = mod.split(".")
            target = parts[1] if len(parts) > 1 else "__init__"
            if target == unit:
                continue
            private_module = any(p.startswith("_") for p in parts[2:])
            private_names = [n for n in names if n.startswith("_") and n != "__version__"]
            # spotkit/_validate.py is the package's own internal toolbox, open to all
            if target == "_validate" and len(parts) == 2:
                continue
            if private_module or private_names:
                bad.append(f"{path.relative_to(PACKAGE.parent)}:{line} takes "
                           f"{private_names or mod} from {mod}")
    assert not bad, "private names used outside their subpackage:\n" + "\n".join(bad)


def test_no_import_cycles_between_modules():
    graph = {}
    for path in _modules():
        me = _dotted(path)
        deps = set()
        for _, mod, names in _imports(path):
            for n in names or [None]:
                cand = f"{mod}.{n}" if n else mod
                deps.add(cand if (PACKAGE.parent / cand.replace(".", "/")).with_suffix(".py")
                         .exists() else mod)
        graph[me] = {d for d in deps if d != me}
    # package __init__ files re-export their own modules; a module importing its own
    # package's __init__ would close a loop, so they count like any other module
    state, stack, cycles = {}, [], []

    def visit(node):
        state[node] = 1
        stack.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                cycles.append(stack[stack.index(nxt):] + [nxt])
            elif nxt not in state:
                visit(nxt)
        stack.pop()
        state[node] = 2

    for node in sorted(graph):
        if node not in state:
            visit(node)
    assert not cycles, "import cycles:\n" + "\n".join(" -> ".join(c) for c in cycles)


SUBPACKAGES = sorted(p.parent.name for p in PACKAGE.glob("*/__init__.py"))


@pytest.mark.parametrize("name", SUBPACKAGES)
def test_subpackage_offers_what_its_modules_offer(name):
    """Each public module's ``__all__`` is collected, as the very same objects, in its
    subpackage's ``__init__`` (the CLI offers only ``main``)."""
    pkg = importlib.import_module(f"spotkit.{name}")
    assert len(pkg.__all__) == len(set(pkg.__all__))
    for path in sorted((PACKAGE / name).glob("*.py")):
        if path.name == "__init__.py" or path.stem.startswith("_") or name == "cli":
            continue
        mod = importlib.import_module(f"spotkit.{name}.{path.stem}")
        for public in getattr(mod, "__all__", []):
            assert public in pkg.__all__, f"spotkit.{name} does not offer {path.stem}.{public}"
            assert getattr(pkg, public) is getattr(mod, public), public
        for public in getattr(mod, "__all__", []):
            assert hasattr(mod, public), f"{mod.__name__}.__all__ names missing {public}"


def test_top_level_names_resolve_and_are_listed():
    import spotkit

    assert "__version__" in spotkit.__all__
    for name in spotkit.__all__:
        assert getattr(spotkit, name) is not None, name
    with pytest.raises(AttributeError, match="no attribute"):
        spotkit.no_such_name  # noqa: B018


def test_import_spotkit_and_its_subpackages_stays_light():
    # computation never imports plotting: matplotlib and cartopy only load when a figure
    # is drawn; dask only for the distributed path
    code = ("import sys, spotkit, spotkit.io, spotkit.compare, spotkit.sim, spotkit.plan, "
            "spotkit.viz, spotkit.coverage, spotkit.report, spotkit.demo, spotkit.cli;"
            "print(sorted(m for m in ('matplotlib', 'cartopy', 'dask') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"
