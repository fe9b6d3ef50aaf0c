"""Helpers of the survey tests: bad files made in a temporary folder, expected tables, comparison.

The bad files are made here from scratch or from a real entry read out of
shared/structures (see SOURCES.md); nothing is copied into the repository.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pandas as pd

from fescan.analysis.scan import scan
from fescan.analysis.tables import SCHEMAS, result_tables, to_frame
from fescan.core.records import CATEGORIES

#: Substrings of file names that trigger the test-only hooks of fescan.survey.
CRASH, HANG, HOG = "crash_marked", "hang_marked", "memory_marked"

#: Environment that arms the hooks for the files made by :func:`make_bad_files`.
HOOK_ENV = {"FESCAN_TEST_CRASH_MARKER": CRASH, "FESCAN_TEST_HANG_MARKER": HANG,
            "FESCAN_TEST_MEMORY_MARKER": HOG}

#: Small, quick shared entries (2AXT and 19HC are the slowest; left out where speed matters).
QUICK = ("1FDN", "7FD1", "6LK1", "5WQQ", "2DSX", "2NIP", "1BE3", "1DWL", "3EK3", "1YQ9")


def make_bad_files(folder: Path, good: Path, good_cif: Path, *, hooks: bool = True) -> dict[str, tuple[str, str]]:
    """Write bad structure files into ``folder``; return name -> (reason, error class).

    ``good`` (a PDB file) and ``good_cif`` (an mmCIF file) are real entries: the
    NaN file and the hook-marked copies are made from ``good`` (the copies are
    fine files: only the hooks make them fail), the truncated file from ``good_cif``.
    """
    folder.mkdir(parents=True, exist_ok=True)
    expected: dict[str, tuple[str, str]] = {}

    (folder / "empty.pdb").write_bytes(b"")
    expected["empty.pdb"] = ("error", "EmptyStructureError")  # structure/reading.py: "empty file (0 bytes)"

    source = good_cif.read_bytes()
    (folder / "truncated.cif").write_bytes(source[: len(source) // 2])  # cut inside the atom_site loop
    expected["truncated.cif"] = ("error", "StructureFileError")

    (folder / "not_gzip.pdb.gz").write_bytes(b"\x1f\x8b\x08\x00" + bytes(range(256)) * 4)  # gzip magic, junk
    expected["not_gzip.pdb.gz"] = ("error", "StructureFileError")

    (folder / "garbage.cif").write_bytes(bytes(range(256)) * 16)  # binary data
    expected["garbage.cif"] = ("error", "StructureFileError")

    lines = good.read_bytes().decode("ascii").splitlines(keepends=True)
    k = next(i for i, line in enumerate(lines) if line.startswith("ATOM"))
    lines[k] = lines[k][:30] + "     nan" + lines[k][38:]  # x coordinate columns 31-38
    (folder / "nan_coordinates.pdb").write_text("".join(lines), encoding="ascii")
    expected["nan_coordinates.pdb"] = ("error", "CoordinateError")

    if hooks:
        shutil.copyfile(good, folder / f"{CRASH}.pdb")
        expected[f"{CRASH}.pdb"] = ("crash", "WorkerCrash")
        shutil.copyfile(good, folder / f"{HANG}.pdb")
        expected[f"{HANG}.pdb"] = ("timeout", "Timeout")
        shutil.copyfile(good, folder / f"{HOG}.pdb")
        expected[f"{HOG}.pdb"] = ("memory", "MemoryError")
    return expected


def expected_tables(paths: list[str], **options) -> dict[str, pd.DataFrame]:
    """The tables of single-file runs (fescan.scan + result_tables), concatenated.

    The ``structures`` rows are built here from the ScanResult, independently
    of fescan.survey.
    """
    parts: dict[str, list[pd.DataFrame]] = {}
    rows = []
    for p in paths:
        res = scan(p, **options)
        for name, df in result_tables(res).items():
            parts.setdefault(name, []).append(df)
        cats = [c.category for c in res.cofactors]
        rows.append({"file": p, "entry_id": res.info.entry_id, "title": res.info.title,
                     "method": res.info.method, "resolution": res.info.resolution,
                     "n_models": res.info.n_models, "n_atoms": res.info.n_atoms,
                     **{"n_" + c.replace("-", "_"): cats.count(c) for c in CATEGORIES},
                     "n_cofactors": len(res.cofactors), "n_flags": sum(len(c.flags) for c in res.cofactors),
                     "status": "ok"})
    out = {name: pd.concat(dfs, ignore_index=True) for name, dfs in parts.items()}
    out["structures"] = to_frame("structures", rows)
    return out


def normalise(df: pd.DataFrame, *, csv: bool = False) -> pd.DataFrame:
    """Drop run-dependent columns and sort rows so that tables compare equal."""
    df = df.drop(columns=[c for c in ("seconds",) if c in df.columns])
    if csv:  # in CSV an empty string and a missing value are written alike
        df = df.apply(lambda s: s.replace("", pd.NA) if s.dtype == "string" else s)
    return df.sort_values(list(df.columns), na_position="first").reset_index(drop=True)


def assert_same_tables(a: dict[str, pd.DataFrame], b: dict[str, pd.DataFrame], *, csv: bool = False) -> None:
    """Every table of ``a`` equals the one of ``b`` after :func:`normalise`."""
    for name in SCHEMAS:
        if name == "timings":  # wall times differ from run to run by definition
            continue
        if name not in a and name not in b:
            continue
        pd.testing.assert_frame_equal(normalise(a[name], csv=csv), normalise(b[name], csv=csv),
                                      obj=f"table {name}")
