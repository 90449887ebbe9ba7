"""The package's shape, read from the source text (ast), so that it stays as DEVELOPERS.md
describes it: no import circles, no private names across modules, nothing importing upward,
few modules at the top, none too long, and a light `import layercalc`."""

from __future__ import annotations

import ast
import graphlib
import subprocess
import sys
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "layercalc"

# Layers from the top down; a module may import only from its own layer or below.
LAYERS = {
    "cli": 9, "__main__": 9, "api": 8, "report": 7, "plots": 7, "formats": 6, "evaluation": 5,
    "checking": 4, "soundings": 3, "language": 2, "physics": 1,
    "errors": 0, "source": 0, "files": 0, "constants": 0, "caution": 0, "version": 0,
    "names": 0, "limits": 0,
    "": 10,  # layercalc/__init__.py names the public API (lazily)
}
MAX_FLAT_MODULES = 12
MAX_LINES = 500


def _modules() -> dict[str, Path]:
    found = {}
    for path in PACKAGE.rglob("*.py"):
        parts = path.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        found[name] = path
    return found


def _imports(name: str, path: Path, modules) -> list[tuple[str, str]]:
    """(imported module, imported name) pairs, relative imports resolved."""
    package = name if path.name == "__init__.py" else name.rsplit(".", 1)[0]
    pairs = []
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")[: len(package.split(".")) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            for alias in node.names:
                if f"{target}.{alias.name}" in modules:
                    pairs.append((f"{target}.{alias.name}", ""))
                elif target in modules:
                    pairs.append((target, alias.name))
        elif isinstance(node, ast.Import):
            pairs += [(a.name, "") for a in node.names if a.name in modules]
    return [(t, n) for t, n in pairs if t != name]


def _stage(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


MODULES = _modules()
IMPORTS = {name: _imports(name, path, MODULES) for name, path in MODULES.items()}


def test_no_import_circles():
    graph = {name: {t for t, _ in pairs if not name.startswith(t + ".")}
             for name, pairs in IMPORTS.items()}
    try:
        tuple(graphlib.TopologicalSorter(graph).static_order())
    except graphlib.CycleError as exc:
        pytest.fail(f"import circle: {' -> '.join(exc.args[1])}")


def test_no_private_names_across_modules():
    private = [f"{name} imports {n} from {t}" for name, pairs in IMPORTS.items()
               for t, n in pairs if n.startswith("_") and not n.startswith("__")]
    assert private == []


def test_nothing_imports_upward():
    upward = [f"{name} ({_stage(name)}) imports {t} ({_stage(t)})"
              for name, pairs in IMPORTS.items() for t, _ in pairs
              if LAYERS[_stage(t)] > LAYERS[_stage(name)]]
    assert upward == []


def test_every_stage_is_known_and_documented():
    for name, path in MODULES.items():
        assert _stage(name) in LAYERS, f"{name}: add its stage to LAYERS and DEVELOPERS.md"
        if path.name == "__init__.py" and name != "layercalc":
            doc = ast.get_docstring(ast.parse(path.read_text(encoding="utf-8"))) or ""
            assert "May import" in doc, f"{name}: say what it may import"


def test_few_modules_at_the_top_and_none_too_long():
    flat = sorted(p.name for p in PACKAGE.glob("*.py"))
    assert len(flat) <= MAX_FLAT_MODULES, flat
    long = {name: n for name, path in MODULES.items()
            if (n := len(path.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert long == {}


@pytest.mark.slow
def test_import_layercalc_stays_light():
    code = ("import sys, layercalc; heavy = ('numpy', 'sympy', 'pandas', 'openpyxl', "
            "'matplotlib', 'lark'); print([m for m in heavy if m in sys.modules])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "[]"
