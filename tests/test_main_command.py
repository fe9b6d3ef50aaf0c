"""End to end: the README's main command reproduces the committed reports/ from example_structures/.

The examples are invented demo data (example_structures/README.md); this checks that the
committed outputs are what the tool makes today. Nothing here compares floating-point
output byte for byte: tables are compared as parsed values (relative tolerance 1e-9,
timing table aside), pages and diagrams as text whose numbers are compared with a
tolerance, PNG pictures by their pixel size.
"""

from __future__ import annotations

import re
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

import fescan
from fescan.analysis.tables import SCHEMAS

ROOT = Path(__file__).resolve().parents[1]
RUN_DEPENDENT = {"timings"}  # wall-clock time per file: differs from run to run by definition
_NUMBER = re.compile(r"-?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?")


def readme_main_command() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    m = re.search(r"&& (fescan survey example_structures[^\n`]*)", text)
    assert m, "README names the main command"
    return m.group(1).split()


def _files(folder: Path) -> dict[str, Path]:
    return {p.relative_to(folder).as_posix(): p for p in folder.rglob("*")
            if p.is_file() and "_survey_state" not in p.parts and not p.name.startswith("timings.")}


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


def test_same_tables_in_the_same_row_order(fresh):
    # rows are sorted before writing, so the merged tables do not depend on worker finish order
    for name in SCHEMAS:
        if name in RUN_DEPENDENT:
            continue
        a = pd.read_parquet(ROOT / "reports" / f"{name}.parquet")
        b = pd.read_parquet(fresh / f"{name}.parquet")
        # 1e-6: an ill-conditioned first-passage time (the gap demo, 176 s) moves by ~1e-8 with the BLAS
        pd.testing.assert_frame_equal(a, b, check_exact=False, rtol=1e-6, obj=name)


def _split_numbers(text: str) -> tuple[list[str], list[float]]:
    return _NUMBER.split(text), [float(x) for x in _NUMBER.findall(text)]


def test_same_pages_and_diagrams(fresh):
    committed = _files(ROOT / "reports")
    for rel, path in _files(fresh).items():
        if rel.endswith(".parquet"):
            continue
        if rel.endswith(".png"):  # raster output depends on the font renderer: compare the pixel size
            assert path.read_bytes()[16:24] == committed[rel].read_bytes()[16:24], rel
            continue
        words_a, nums_a = _split_numbers(committed[rel].read_text(encoding="utf-8"))
        words_b, nums_b = _split_numbers(path.read_text(encoding="utf-8"))
        assert words_a == words_b, rel
        assert nums_b == pytest.approx(nums_a, rel=1e-6, abs=0.02), rel


def _design(path: Path) -> dict:
    """What a demo file was designed to show, as fescan reads it (not its exact coordinates)."""
    res = fescan.scan(path)
    return {
        "cofactors": sorted((c.key, c.cls, len({lig.atom.residue for lig in c.ligands})) for c in res.cofactors),
        "flags": sorted({(c.key, f.code) for c in res.cofactors for f in c.flags}),
        "path": [res.cofactor(u).key for u in res.wire.path],
        "gaps": len(res.wire.gaps),
    }


def test_example_builder_rebuilds_the_same_designs(tmp_path):
    # The builder searches backbone conformations with floating-point costs, so on another
    # CPU or BLAS it may settle on a different but equally valid backbone (last-digit
    # differences change which candidate wins). The committed files are the demo data; a
    # rebuild must pass the builder's own geometry check (exit status 0) and give the same
    # designs: the same cofactors, classes, ligand counts, flags, wire and gaps.
    r = subprocess.run([sys.executable, str(ROOT / "example_structures" / "build_examples.py"), "--out", str(tmp_path)],
                       capture_output=True, text=True, timeout=900)
    assert r.returncode == 0, r.stderr
    built = sorted(p for p in tmp_path.iterdir() if p.is_file())
    assert [p.name for p in built] == sorted(p.name for p in (ROOT / "example_structures").iterdir()
                                             if p.is_file() and p.name not in ("README.md", "build_examples.py"))
    for p in built:
        assert _design(p) == _design(ROOT / "example_structures" / p.name), p.name
