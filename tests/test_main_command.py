"""End to end: the README's main command reproduces the committed reports/ from example_structures/.

The examples are invented demo data (example_structures/README.md); this checks that the
committed outputs are what the tool makes today: the same tables (row order aside, timing
columns aside) and the same diagrams and pages byte for byte.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

ROOT = Path(__file__).resolve().parents[1]
VOLATILE = {"seconds"}  # wall-clock time per file


def readme_main_command() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    m = re.search(r"&& (fescan survey example_structures[^\n`]*)", text)
    assert m, "README names the main command"
    return m.group(1).split()


def _files(folder: Path) -> dict[str, Path]:
    return {p.relative_to(folder).as_posix(): p for p in folder.rglob("*")
            if p.is_file() and "_survey_state" not in p.parts}


@pytest.fixture(scope="module")
def fresh(tmp_path_factory) -> Path:
    work = tmp_path_factory.mktemp("readme")
    shutil.copytree(ROOT / "example_structures", work / "example_structures")
    argv = readme_main_command()
    r = subprocess.run([sys.executable, "-m", "fescan.cli", *argv[1:], "--quiet"], cwd=work,
                       capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    return work / argv[argv.index("-o") + 1]


def test_same_files(fresh):
    assert sorted(_files(fresh)) == sorted(_files(ROOT / "reports"))


def test_same_tables(fresh):
    for name in ("structures", "failures", "cofactors", "ligands", "flags", "pairs", "hops", "wires"):
        a = pd.read_parquet(ROOT / "reports" / f"{name}.parquet")
        b = pd.read_parquet(fresh / f"{name}.parquet")
        cols = [c for c in a.columns if c not in VOLATILE]
        a = a[cols].sort_values(cols).reset_index(drop=True)
        b = b[cols].sort_values(cols).reset_index(drop=True)
        pd.testing.assert_frame_equal(a, b, check_exact=False, rtol=1e-9)


def test_same_pages_and_diagrams_byte_for_byte(fresh):
    committed = _files(ROOT / "reports")
    for rel, path in _files(fresh).items():
        if rel.endswith(".parquet"):
            continue
        assert path.read_bytes() == committed[rel].read_bytes(), rel


def test_examples_are_rebuilt_identically(tmp_path):
    # the example builder is deterministic: a rebuild equals the committed files byte for byte
    r = subprocess.run([sys.executable, str(ROOT / "example_structures" / "build_examples.py"), "--out", str(tmp_path)],
                       capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr
    built = {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.is_file()}
    assert built, "the builder wrote files"
    for name, data in built.items():
        assert (ROOT / "example_structures" / name).read_bytes() == data, name
