"""Architecture rules from DESIGN.md, proven in a fresh interpreter."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
CORE = ["placement", "stream", "checks", "sim", "record"]


def _modules(package: str) -> list[str]:
    base = ROOT / "bedside" / package
    return [
        "bedside." + ".".join(p.relative_to(ROOT / "bedside").with_suffix("").parts)
        for p in sorted(base.rglob("*.py"))
        if p.name != "__init__.py"
    ] + [f"bedside.{package}"]


@pytest.mark.parametrize("package", CORE)
def test_core_package_never_loads_textual(package: str) -> None:
    mods = _modules(package)
    code = (
        "import sys, importlib\n"
        f"for m in {mods!r}: importlib.import_module(m)\n"
        "bad = [m for m in sys.modules if m == 'textual' or m.startswith('textual.') "
        "or m.startswith('bedside.ui')]\n"
        "print(','.join(bad)); sys.exit(1 if bad else 0)\n"
    )
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 0, f"{package} loads UI modules: {proc.stdout} {proc.stderr}"


def test_only_stream_and_sim_import_pylsl() -> None:
    offenders = []
    for path in (ROOT / "bedside").rglob("*.py"):
        rel = path.relative_to(ROOT / "bedside").parts
        if rel[0] in ("stream", "sim"):
            continue
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.module:
                names = [node.module]
            if any(n == "pylsl" or n.startswith("pylsl.") for n in names):
                offenders.append(str(path.relative_to(ROOT)))
    assert offenders == []


def test_no_print_in_core() -> None:
    offenders = []
    for package in ["placement", "stream", "checks", "record"]:
        for path in (ROOT / "bedside" / package).rglob("*.py"):
            tree = ast.parse(path.read_text(encoding="utf-8"))
            for node in ast.walk(tree):
                if (
                    isinstance(node, ast.Call)
                    and isinstance(node.func, ast.Name)
                    and node.func.id == "print"
                ):
                    offenders.append(f"{path.relative_to(ROOT)}:{node.lineno}")
    assert offenders == []
