"""Every ``fescan.``-dotted name and ``fescan/`` file path in the docs and docstrings exists.

The package moved into stage folders once (``fescan.tables`` became ``fescan.analysis.tables``,
``fescan.errors`` became ``fescan.core.errors``, ...) and the prose kept the old names; this
test fails on any name in the package sources (docstrings, comments, strings), ``docs/*.md``,
``README.md``, ``DEVELOPERS.md`` and ``benchmarks/`` that no longer resolves. A name resolves
when its longest importable prefix is a module and the rest are attributes of it (so
``fescan.scan``, the lazy function, resolves too). Templates such as ``fescan.cli.cmd_<name>``
or ``f"fescan.cli.cmd_{name}"`` are skipped. No structure file is read.
"""

from __future__ import annotations

import importlib
import re
from functools import cache
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

#: A dotted name starting at the package: ``fescan.core.errors.ConfigError``.
DOTTED = re.compile(r"(?<![\w./-])fescan(?:\.[A-Za-z_]\w*)+")
#: A file path inside the package: ``fescan/analysis/tables.py``, ``fescan/data/potentials.csv``.
FILE_PATH = re.compile(r"(?<![\w./-])fescan/[\w/]+\.(?:py|csv|md|json|toml)\b")


def _sources() -> list[Path]:
    files = sorted((ROOT / "fescan").rglob("*.py"))
    files += sorted((ROOT / "docs").glob("*.md"))
    files += [ROOT / "README.md", ROOT / "DEVELOPERS.md"]
    files += sorted(p for p in (ROOT / "benchmarks").rglob("*") if p.suffix in (".py", ".md"))
    return [p for p in files if p.is_file()]


@cache
def resolves(name: str) -> bool:
    """True when ``name`` is a module, or a chain of attributes of its longest module prefix."""
    parts = name.split(".")
    for i in range(len(parts), 0, -1):
        try:
            obj = importlib.import_module(".".join(parts[:i]))
        except ModuleNotFoundError:
            continue
        for attr in parts[i:]:
            if not hasattr(obj, attr):
                return False
            obj = getattr(obj, attr)
        return True
    return False


def _dotted_names(text: str):
    for m in DOTTED.finditer(text):
        if text[m.end():m.end() + 1] in ("<", "{"):  # a template: fescan.cli.cmd_<name>
            continue
        yield m.start(), m.group(0)


def _where(path: Path, text: str, pos: int) -> str:
    return f"{path.relative_to(ROOT)}:{text.count(chr(10), 0, pos) + 1}"


def test_resolves_knows_modules_attributes_and_stale_names():
    assert resolves("fescan.core.errors.ConfigError")
    assert resolves("fescan.analysis.tables")
    assert resolves("fescan.scan")  # the lazy package attribute
    assert not resolves("fescan.tables.SCHEMAS")
    assert not resolves("fescan.core.errors.NoSuchError")
    # a template is not a name; a file name's extension is not part of the name either
    assert [n for _, n in _dotted_names("see fescan.cli.cmd_<name> and f'fescan.cli.cmd_{x}'")] == []
    assert [n for _, n in _dotted_names("fescan.core.numbers.")] == ["fescan.core.numbers"]


def test_every_dotted_fescan_name_in_docs_and_docstrings_resolves():
    stale = []
    for path in _sources():
        text = path.read_text(encoding="utf-8")
        for pos, name in _dotted_names(text):
            if not resolves(name):
                stale.append(f"{_where(path, text, pos)}: {name}")
    assert not stale, "names that no longer exist:\n" + "\n".join(stale)


def test_every_fescan_file_path_in_docs_and_docstrings_exists():
    missing = []
    for path in _sources():
        text = path.read_text(encoding="utf-8")
        for m in FILE_PATH.finditer(text):
            if not (ROOT / m.group(0)).is_file():
                missing.append(f"{_where(path, text, m.start())}: {m.group(0)}")
    assert not missing, "files that no longer exist:\n" + "\n".join(missing)
