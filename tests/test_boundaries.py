"""Architecture rules from DESIGN.md: read from every module's source (the AST, so an
import inside a function or under ``if TYPE_CHECKING:`` counts as much as one at the
top) and proven in a fresh interpreter.

The rules: the core packages (placement, stream, checks, sim, record) never import
textual or ``bedside.ui``, not even through another bedside module; only ``stream/``
and ``sim/`` import pylsl; the core never prints.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
CORE = ["placement", "stream", "checks", "sim", "record"]


def _module_name(path: Path, root: Path = ROOT) -> str:
    parts = path.relative_to(root).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imported(path: Path, root: Path = ROOT) -> set[str]:
    """Every module name an import statement anywhere in ``path`` names (relative ones
    resolved; ``from a import b`` gives ``a`` and ``a.b``, which may be a module)."""
    name = _module_name(path, root)
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    out: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - (node.level - 1)]
                base = ".".join(anchor + ([base] if base else []))
            out.add(base)
            out.update(f"{base}.{a.name}" for a in node.names)
    return out


def _import_graph() -> dict[str, set[str]]:
    return {_module_name(p): _imported(p) for p in sorted((ROOT / "bedside").rglob("*.py"))}


def _is_ui(module: str) -> bool:
    return module.split(".")[0] == "textual" or module == "bedside.ui" or module.startswith("bedside.ui.")


def _ui_paths(start: str, graph: dict[str, set[str]]) -> list[str]:
    """Import chains from ``start`` (through bedside modules) that end in textual or
    bedside.ui, e.g. "bedside.record.x -> bedside.montage -> textual"."""
    found: list[str] = []
    seen = {start}
    todo = [(start, [start])]
    while todo:
        mod, chain = todo.pop()
        for dep in sorted(graph.get(mod, ())):
            if _is_ui(dep):
                found.append(" -> ".join([*chain, dep]))
            elif dep in graph and dep not in seen:
                seen.add(dep)
                todo.append((dep, [*chain, dep]))
    return found


@pytest.mark.parametrize("package", CORE)
def test_core_package_never_imports_ui_anywhere_in_its_source(package: str) -> None:
    graph = _import_graph()
    starts = [m for m in graph if m == f"bedside.{package}" or m.startswith(f"bedside.{package}.")]
    assert starts, f"no modules found for bedside.{package}"
    chains = [chain for m in starts for chain in _ui_paths(m, graph)]
    assert chains == [], "\n".join(chains)


def test_the_ast_scan_sees_an_import_inside_a_function(tmp_path: Path) -> None:
    """The scan itself: an import in a function body, a relative one, and one reached
    through another bedside module are all found (a fresh interpreter sees none of
    them, since nothing calls the function)."""
    probe = tmp_path / "bedside" / "placement" / "probe.py"
    probe.parent.mkdir(parents=True)
    probe.write_text("def f():\n    from ..ui.app import make_app\n    import textual\n"
                     "    return make_app, textual\n", encoding="utf-8")
    found = _imported(probe, tmp_path)
    assert {"bedside.ui.app", "bedside.ui.app.make_app", "textual"} <= found
    graph = {"bedside.placement.probe": {"bedside.montage"}, "bedside.montage": {"textual.app"}}
    assert _ui_paths("bedside.placement.probe", graph) == [
        "bedside.placement.probe -> bedside.montage -> textual.app"]


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
        if any(n.split(".")[0] == "pylsl" for n in _imported(path)):
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
