"""The package layout is the data flow: imports point down the stages, never up, never in a cycle.

Reads every module's imports from its syntax tree (top-level and inside functions,
plus module names passed as strings to ``importlib.import_module`` / ``find_spec``),
so an import hidden in a function or behind ``importlib`` counts too. Imports under
``if TYPE_CHECKING:`` are annotations only and do not count.
Common practice, no source: a layered architecture with acyclic dependencies.
"""

from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx
import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "fescan"

#: Stages from the bottom up; a module may import its own stage and stages listed before it.
STAGES = ("core", "structure", "cofactors", "transfer", "analysis", "surveys", "comparison", "report", "api", "cli")
#: Stages that sit side by side: neither may import the other.
SIBLINGS = {frozenset({"surveys", "comparison"})}


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    me = _module_name(path)
    pkg = me if path.name == "__init__.py" else me.rsplit(".", 1)[0]
    for node in list(ast.walk(tree)):  # type-only imports (under `if TYPE_CHECKING:`) are no dependency
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            node.body = [ast.Pass()]
    out: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = pkg.split(".")[: len(pkg.split(".")) - node.level + 1]
                base = ".".join(anchor + ([base] if base else []))
            out.add(base)
            out.update(f"{base}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Call) and node.args and isinstance(node.args[0], ast.Constant):
            func = node.func
            name = func.attr if isinstance(func, ast.Attribute) else getattr(func, "id", "")
            if name in ("import_module", "find_spec") and isinstance(node.args[0].value, str):
                out.add(node.args[0].value)
    return {m for m in out if m == "fescan" or m.startswith("fescan.")}


def _modules() -> dict[str, set[str]]:
    return {_module_name(p): _imports(p) for p in PACKAGE.rglob("*.py")}


def _stage(module: str) -> str | None:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else None


def _resolve(target: str, known: set[str]) -> str | None:
    """The module a dotted import name refers to (``fescan.x.y.Name`` -> ``fescan.x.y``)."""
    while target and target not in known:
        target = target.rpartition(".")[0]
    return target or None


def test_no_upward_or_sideways_import_between_stages():
    mods = _modules()
    known = set(mods)
    bad = []
    for mod, targets in mods.items():
        src = _stage(mod)
        if src is None:  # the package face imports lazily from every stage by design
            continue
        assert src.removesuffix(".py") in STAGES, f"{mod}: stage {src!r} is not in the declared order"
        for t in targets:
            dst_mod = _resolve(t, known)
            dst = _stage(dst_mod) if dst_mod else None
            if dst is None or dst == src:
                continue
            if dst_mod == "fescan":
                bad.append(f"{mod} imports the package face")
            elif frozenset({src, dst}) in SIBLINGS or STAGES.index(dst) > STAGES.index(src):
                bad.append(f"{mod} -> {dst_mod}")
    assert not bad, "imports against the data flow:\n" + "\n".join(sorted(bad))


def test_no_import_cycle_between_modules():
    mods = _modules()
    known = set(mods)
    g = nx.DiGraph()
    for mod, targets in mods.items():
        for t in targets:
            dst = _resolve(t, known)
            if dst and dst != mod and not mod.startswith(dst + "."):  # a module may import its own package
                g.add_edge(mod, dst)
    cycles = list(nx.simple_cycles(g))
    assert not cycles, f"import cycles: {cycles[:5]}"


def test_checker_sees_hidden_imports(tmp_path):
    # the checker must catch imports inside functions and behind importlib, or it could not fail
    f = tmp_path / "x.py"
    f.write_text("def f():\n    import fescan.report.text\n    importlib.import_module('fescan.cli.main')\n")
    global PACKAGE
    old, PACKAGE = PACKAGE, tmp_path
    try:
        assert _imports(f) == {"fescan.report.text", "fescan.cli.main"}
    finally:
        PACKAGE = old


@pytest.mark.parametrize("module", ["fescan", "fescan.transfer.rate_law", "fescan.analysis.scan"])
def test_lean_imports(module):
    # `import fescan` and the per-structure stages load no table, plotting or cluster library
    import subprocess
    import sys

    code = (f"import sys, {module}; heavy = [m for m in ('pandas', 'pyarrow', 'matplotlib', 'dask', "
            "'distributed', 'fescan.surveys.run', 'fescan.comparison.compare') if m in sys.modules]; print(heavy)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == "[]", f"{module} loads {out}"


def test_scan_command_loads_no_scipy_spatial_or_pandas(tmp_path):
    # a one-structure scan (the command, on a demo file) starts without scipy's k-d tree and pandas:
    # they were most of its start-up (DEVELOPERS.md, "no scipy k-d tree on the scan path");
    # scipy.sparse may load for a wire of many relays (a master equation above 128 states)
    import subprocess
    import sys
    from pathlib import Path

    demo = sorted((Path(__file__).resolve().parents[1] / "example_structures").glob("*.cif"))[0]
    code = ("import sys\nfrom fescan.cli.main import main\n"
            f"rc = main(['scan', {str(demo)!r}, '--brief'])\n"
            "print([m for m in ('scipy.spatial', 'scipy.optimize', 'pandas', 'pyarrow', 'matplotlib') "
            "if m in sys.modules])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=tmp_path).stdout.strip().splitlines()[-1]
    assert out == "[]", out


def test_small_scan_does_not_load_numpy_masked_arrays(tmp_path):
    # numpy 2's plain np.unique imports numpy.ma at first use (about 15 ms of a one-file
    # scan's start-up); fescan.core.arrays.distinct avoids it. A scan whose wire needs no
    # scipy (which loads numpy.ma itself) must not load it.
    import subprocess
    import sys
    from pathlib import Path

    demo = Path(__file__).resolve().parents[1] / "example_structures" / "rb5_rieske_heme.cif"
    code = ("import sys\nfrom fescan.cli.main import main\n"
            f"rc = main(['scan', {str(demo)!r}, '--brief'])\n"
            "print(['scipy' in sys.modules, 'numpy.ma' in sys.modules])")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=tmp_path).stdout.strip().splitlines()[-1]
    assert out == "[False, False]", out


@pytest.mark.parametrize(("module", "absent"), [
    ("fescan.surveys.run", ("networkx", "fescan.analysis.scan", "fescan.surveys.worker")),  # the survey's parent
    ("fescan.surveys.worker", ("pandas", "pyarrow", "fescan.surveys.run", "fescan.surveys.store")),  # its workers
])
def test_survey_parent_and_workers_load_only_their_share(module, absent):
    # the parent keeps the tables (pandas) and never the scan machinery; a worker (and the
    # forkserver that preloads fescan.surveys.worker) keeps the scan and never the tables
    import subprocess
    import sys

    code = f"import sys, {module}; print([m for m in {absent!r} if m in sys.modules])"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout.strip()
    assert out == "[]", f"{module} loads {out}"
