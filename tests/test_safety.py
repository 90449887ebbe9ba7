"""User text never reaches eval, exec, sympify, pickle or a shell: scan the package."""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "layercalc"
FORBIDDEN_NAMES = {"eval", "exec", "compile", "sympify", "parse_expr", "__import__"}
FORBIDDEN_ATTRIBUTES = {"eval", "exec", "sympify", "parse_expr", "system", "popen"}
FORBIDDEN_MODULES = {"pickle", "marshal", "shelve", "dill", "cloudpickle"}


def _calls(tree):
    for node in ast.walk(tree):
        if isinstance(node, ast.Call):
            func = node.func
            if isinstance(func, ast.Attribute):
                if func.attr in FORBIDDEN_ATTRIBUTES:
                    yield node, func.attr
            elif getattr(func, "id", None) in FORBIDDEN_NAMES:
                yield node, func.id
            if any(k.arg == "shell" for k in node.keywords):
                yield node, "shell="


def test_package_never_calls_dangerous_functions():
    problems = []
    files = sorted(PACKAGE.rglob("*.py"))
    assert len(files) > 10  # the scan really looked at the package
    for path in files:
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        for node, name in _calls(tree):
            problems.append(f"{path.name}:{node.lineno}: {name}")
        for node in ast.walk(tree):
            if isinstance(node, (ast.Import, ast.ImportFrom)):
                names = [a.name for a in node.names] if isinstance(node, ast.Import) else \
                    [node.module or ""]
                for module in names:
                    if module.split(".")[0] in FORBIDDEN_MODULES:
                        problems.append(f"{path.name}:{node.lineno}: imports {module}")
    assert problems == []


def test_scan_would_catch_an_eval(tmp_path):
    # the scanner itself can fail: an eval call in a sample file is found
    tree = ast.parse("x = eval(user_text)\nsympy.sympify(t)\nre.compile('a')\n"
                     "subprocess.run(c, shell=True)\n")
    assert [name for _, name in _calls(tree)] == ["eval", "sympify", "shell="]
