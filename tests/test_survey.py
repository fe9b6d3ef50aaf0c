"""fescan.survey: many files, bad ones recorded, tables equal to single-file runs, engines agree.

Real entries come from shared/structures (SOURCES.md); bad files are made in a
temporary folder by tests/survey_helpers.py. The expected results of good files
are the single-file API (fescan.scan + fescan.analysis.tables.result_tables): the survey
must give exactly those rows.
"""

from __future__ import annotations

import re
from pathlib import Path

import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from fescan.analysis.tables import SCHEMAS, tables_markdown
from fescan.api import survey
from fescan.cli.main import main
from fescan.core.errors import ConfigError, StructureNotFound
from fescan.core.records import CATEGORIES
from fescan.surveys.run import analyse_file, find_structure_files, report_stem
from fescan.surveys.store import TABLE_NAMES, arrow_schema, read_table
from tests.datafiles import ENTRIES, SHARED, entry_path, requires_shared
from tests.survey_helpers import (
    HOOK_ENV,
    QUICK,
    assert_same_tables,
    expected_tables,
    make_bad_files,
)

DOCS = Path(__file__).resolve().parents[1] / "docs" / "survey_tables.md"
_ARROW = {"string": pa.large_string(), "Int64": pa.int64(), "float64": pa.float64(), "boolean": pa.bool_()}


def _tables(summary) -> dict[str, pd.DataFrame]:
    return {name: read_table(path, name) for name, path in summary.tables.items()}


# --- finding files ---------------------------------------------------------------------


def test_find_structure_files(tmp_path):
    # common practice, no source: structure files are told by suffix, or by content for other names
    (tmp_path / "sub" / "deeper").mkdir(parents=True)
    (tmp_path / "a.pdb").write_text("ATOM\n")
    (tmp_path / "sub" / "b.cif.gz").write_bytes(b"")
    (tmp_path / "sub" / "deeper" / "c.ENT").write_text("x")
    (tmp_path / "sub" / "model.pdb1").write_text("HEADER    TEST\nATOM      1  N   ALA A   1\n")
    (tmp_path / "notes.txt").write_text("just words\n")
    (tmp_path / ".hidden.pdb").write_text("ATOM\n")
    found = find_structure_files([tmp_path])
    names = sorted(Path(f).name for f in found)
    assert names == ["a.pdb", "b.cif.gz", "c.ENT", "model.pdb1"]
    # a file named twice (directly and through its folder) is listed once; globs expand
    again = find_structure_files([tmp_path / "a.pdb", tmp_path, str(tmp_path / "**" / "*.ENT")])
    assert len(again) == 4 and again[0] == str(tmp_path / "a.pdb")
    # an explicit file is taken whatever its name
    assert find_structure_files([tmp_path / "notes.txt"]) == [str(tmp_path / "notes.txt")]
    with pytest.raises(StructureNotFound, match="no such file or folder"):
        find_structure_files([tmp_path / "missing.pdb"])
    with pytest.raises(StructureNotFound, match="matches no file"):
        find_structure_files([str(tmp_path / "*.mmcif")])


def test_output_folder_is_not_searched(tmp_path):
    (tmp_path / "a.pdb").write_text("ATOM\n")
    (tmp_path / "out").mkdir()
    (tmp_path / "out" / "structures.csv").write_text("ATOM\n")  # looks like PDB text
    assert find_structure_files([tmp_path], exclude=tmp_path / "out") == [str(tmp_path / "a.pdb")]


def test_bad_options_are_config_errors(tmp_path):
    (tmp_path / "a.pdb").write_text("ATOM\n")
    with pytest.raises(ConfigError, match="unknown option"):
        survey([tmp_path], tmp_path / "o", bogus=1)
    with pytest.raises(ConfigError, match="engine"):
        survey([tmp_path], tmp_path / "o", engine="threads")
    with pytest.raises(ConfigError, match="format"):
        survey([tmp_path], tmp_path / "o", table_format="xlsx")


def test_table_schemas_cover_categories():
    # the structures table has one count column per cofactor category of fescan.core.records
    cols = [c.name for c in SCHEMAS["structures"]]
    assert [c for c in cols if c.startswith("n_") and c[2:].replace("_", "-") in CATEGORIES] == [
        "n_" + c.replace("-", "_") for c in CATEGORIES]


def test_docs_are_up_to_date():
    # docs/survey_tables.md is what the README section is copied from: it must match SCHEMAS
    assert DOCS.read_text(encoding="utf-8") == tables_markdown(), (
        "docs/survey_tables.md is stale; regenerate it: python -c \"from fescan.analysis.tables import "
        "tables_markdown; open('docs/survey_tables.md', 'w', encoding='utf-8').write(tables_markdown())\"")
    for name in TABLE_NAMES:
        for c in SCHEMAS[name]:
            assert f"| `{c.name}` | {c.dtype} |" in DOCS.read_text(encoding="utf-8")


# --- a survey over the shared entries plus bad files --------------------------------------


@pytest.fixture(scope="module")
def bad_run(tmp_path_factory):
    if not SHARED.is_dir():
        pytest.skip(f"{SHARED} not present (CI provides ../shared/structures)")
    root = tmp_path_factory.mktemp("survey")
    expected_bad = make_bad_files(root / "bad", entry_path("1FDN"), entry_path("3EK3"))
    mp = pytest.MonkeyPatch()
    for k, v in HOOK_ENV.items():
        mp.setenv(k, v)
    try:
        # 2 GiB: well above a worker's start (about 0.5 GiB of address space) and the
        # largest shared entry; the memory-marked file allocates past it
        summary = survey([SHARED, root / "bad"], root / "out", workers=2, time_limit=20, memory_limit=2,
                         quiet=True)
    finally:
        mp.undo()
    return summary, expected_bad


@requires_shared
def test_every_file_has_a_row(bad_run):
    summary, expected_bad = bad_run
    st = read_table(summary.tables["structures"], "structures")
    assert summary.n_files == len(ENTRIES) + len(expected_bad) == len(st)
    assert st["file"].is_unique
    ok = st[st["status"] == "ok"]
    assert sorted(Path(f).name for f in ok["file"]) == sorted(ENTRIES.values())
    assert summary.n_ok == len(ENTRIES) and summary.n_failed == len(expected_bad)


@requires_shared
def test_bad_files_fail_with_their_reason(bad_run):
    summary, expected_bad = bad_run
    fail = read_table(summary.tables["failures"], "failures")
    got = {Path(f).name: (r, c) for f, r, c in zip(fail["file"], fail["reason"], fail["error_class"])}
    assert got == expected_bad
    for f, msg in zip(fail["file"], fail["message"]):
        assert msg.startswith(f), "the message names the file"
    reasons = pd.Series([r for r, _ in expected_bad.values()]).value_counts().to_dict()
    assert summary.failures_by_reason == reasons
    assert summary.n_unexpected == 0


@requires_shared
def test_good_files_equal_single_file_results(bad_run):
    summary, _ = bad_run
    got = _tables(summary)
    ok = got["structures"]["status"] == "ok"
    good = sorted(got["structures"].loc[ok, "file"])
    want = expected_tables(good)
    got["structures"] = got["structures"][ok]
    del got["failures"]
    assert_same_tables(got, want)


@requires_shared
def test_summary_matches_tables(bad_run):
    summary, _ = bad_run
    cof = read_table(summary.tables["cofactors"], "cofactors")
    assert summary.cofactors_by_class == cof["class"].value_counts().to_dict()
    wires = read_table(summary.tables["wires"], "wires")
    assert len(wires) == len(ENTRIES)  # one wire row per structure (tables.wire_rows)
    assert summary.n_wires == int((wires["n_hops"] > 0).sum())  # the summary counts wires with a path
    assert summary.n_wires_with_gaps == int((wires["n_gaps"] > 0).sum())
    text = summary.to_text()
    assert "not measurements" in text and "failures by reason" in text
    assert summary.to_dict()["table_rows"]["structures"] == summary.n_files


@requires_shared
def test_tables_load_with_declared_dtypes(bad_run):
    summary, _ = bad_run
    for name, path in summary.tables.items():
        df = pd.read_parquet(path)  # plain pandas, no fescan helper
        assert list(df.columns) == [c.name for c in SCHEMAS[name]]
        assert {c: str(t) for c, t in df.dtypes.items()} == {c.name: c.dtype for c in SCHEMAS[name]}, name
        schema = pq.read_schema(path)  # plain pyarrow
        assert [(f.name, f.type) for f in schema] == [(c.name, _ARROW[c.dtype]) for c in SCHEMAS[name]]
        assert schema.equals(arrow_schema(name), check_metadata=False)


# --- formats, engines, CLI -----------------------------------------------------------------


def _quick_paths(n: int = len(QUICK)) -> list[str]:
    return [str(entry_path(k)) for k in QUICK[:n]]


@requires_shared
def test_csv_tables_equal_parquet(tmp_path):
    paths = _quick_paths(5)
    a = survey(paths, tmp_path / "pq", workers=1, quiet=True)
    b = survey(paths, tmp_path / "csv", workers=1, quiet=True, table_format="csv")
    assert all(p.endswith(".csv") for p in b.tables.values())
    tb = _tables(b)
    for name, df in tb.items():
        assert {c: str(t) for c, t in df.dtypes.items()} == {c.name: c.dtype for c in SCHEMAS[name]}
    assert_same_tables(_tables(a), tb, csv=True)


@requires_shared
def test_one_two_workers_and_dask_agree(tmp_path):
    pytest.importorskip("distributed", reason="engine 'dask' needs fescan[dask]")
    paths = _quick_paths(6) + [str(entry_path("19HC"))]
    one = survey(paths, tmp_path / "w1", workers=1, quiet=True)
    two = survey(paths, tmp_path / "w2", workers=2, quiet=True)
    dask = survey(paths, tmp_path / "dask", workers=2, quiet=True, engine="dask")
    assert one.n_ok == two.n_ok == dask.n_ok == len(paths)
    assert_same_tables(_tables(one), _tables(two))
    assert_same_tables(_tables(one), _tables(dask))


@requires_shared
def test_dask_at_a_scheduler_address(tmp_path):
    distributed = pytest.importorskip("distributed", reason="engine 'dask' needs fescan[dask]")
    paths = _quick_paths(2)
    with distributed.LocalCluster(n_workers=1, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  dashboard_address="127.0.0.1:0") as cluster:
        got = survey(paths, tmp_path / "d", quiet=True, engine="dask", scheduler=cluster.scheduler_address)
    assert got.n_ok == 2
    assert_same_tables(_tables(got), _tables(survey(paths, tmp_path / "p", workers=1, quiet=True)))


@requires_shared
def test_cli_survey(tmp_path, capsys):
    out = tmp_path / "out"
    rc = main(["survey", str(entry_path("1FDN")), str(entry_path("5WQQ")), "-o", str(out), "--workers", "1",
               "--format", "csv", "--gap-limit", "12", "--cutoff", "20"])
    assert rc == 0
    text = capsys.readouterr().out
    assert "2 ok, 0 failed" in text and "not measurements" in text
    assert sorted(p.name for p in out.glob("*.csv")) == sorted(f"{n}.csv" for n in TABLE_NAMES)
    rc = main(["survey", str(tmp_path / "nothing_here"), "-o", str(out)])
    err = capsys.readouterr().err
    assert rc == 1 and "no such file or folder" in err and "Traceback" not in err
    assert main(["survey", str(entry_path("1FDN")), "-o", str(out), "--scheduler", "tcp://x:1"]) == 1


# --- the per-file function and the report hook -------------------------------------------


@requires_shared
def test_analyse_file_rows_are_result_tables():
    path = str(entry_path("1KF6"))
    got = analyse_file(path, {})
    assert got["status"] == "ok" and got["structure"]["n_flavin"] == 2  # SOURCES.md: FAD A/721, M/821
    want = expected_tables([path])
    from fescan.analysis.tables import to_frame

    assert_same_tables({n: to_frame(n, r) for n, r in got["rows"].items()},
                       {n: want[n] for n in got["rows"]})


@requires_shared
def test_report_hook_is_injected_and_isolated(tmp_path):
    # the survey stage calls the writer it is given (it never imports the report stage)
    calls = []
    path = str(entry_path("1FDN"))
    out = analyse_file(path, {}, report_dir=str(tmp_path / "structures"),
                       report_writer=lambda result, dest: calls.append((result.info.entry_id, Path(dest))))
    assert "report_error" not in out
    assert calls == [("1FDN", tmp_path / "structures" / report_stem(path))]
    out = analyse_file(path, {}, report_dir=str(tmp_path), report_writer=lambda result, dest: 1 / 0)
    assert "ZeroDivisionError" in out["report_error"] and out["status"] == "ok"


def test_survey_stage_report_needs_a_writer(tmp_path):
    from fescan.core.errors import ConfigError
    from fescan.surveys.run import survey as stage_survey

    with pytest.raises(ConfigError, match="report writer"):
        stage_survey([str(tmp_path)], tmp_path / "o", report=True)


def test_report_stems_are_unique(tmp_path):
    a, b = tmp_path / "x" / "1ABC.pdb.gz", tmp_path / "y" / "1ABC.pdb.gz"
    assert report_stem(str(a)) != report_stem(str(b))
    assert re.fullmatch(r"1ABC\.pdb-[0-9a-f]{8}", report_stem(str(a)))


@requires_shared
def test_timings_table_has_one_row_per_file(tmp_path):
    # per-file wall time lives in its own table, so every other table is run-independent
    paths = [str(entry_path("1FDN")), str(entry_path("2DSX"))]
    s = survey(paths, tmp_path / "o", workers=1, quiet=True)
    t = read_table(s.tables["timings"], "timings")
    assert sorted(t["file"]) == sorted(paths) and (t["seconds"] >= 0).all()
    assert "seconds" not in read_table(s.tables["structures"], "structures").columns


# --- the terminal summary ---------------------------------------------------------------


def test_summary_names_failed_files_and_counts_wires_of_structures(tmp_path, capsys):
    from tests.report_fixtures import write_wire

    src = tmp_path / "in"
    src.mkdir()
    write_wire(src / "wire.pdb", [0, 12, 24])  # three [4Fe-4S] in a row: a wire
    write_wire(src / "single.pdb", [0])  # one cluster: a wires row without a path
    (src / "empty.pdb").write_bytes(b"")
    (src / "broken.pdb").write_text("garbage\n")
    assert main(["survey", str(src), "-o", str(tmp_path / "out"), "--workers", "1"]) == 0
    out = capsys.readouterr().out
    assert "wires traced: 1 of 2 structures (1 without a path)" in out
    lines = out.splitlines()
    assert any(ln.strip().startswith(f"{src / 'empty.pdb'} (error): empty file") for ln in lines), out
    assert any(ln.strip().startswith(f"{src / 'broken.pdb'} (error): not a PDB or mmCIF") for ln in lines), out
    assert "more, see" not in out  # two failures: both named, nothing left over


def test_summary_lists_twenty_failed_files_then_points_to_the_table(tmp_path):
    from fescan.surveys.run import FAILED_FILES_LISTED, SurveySummary

    failed = [{"file": f"/d/bad{k:02d}.pdb", "reason": "error", "message": f"/d/bad{k:02d}.pdb: empty file (0 bytes)"}
              for k in range(FAILED_FILES_LISTED)]
    s = SurveySummary(out_dir=str(tmp_path), tables={"failures": str(tmp_path / "failures.parquet")},
                      table_rows={"wires": 3, "failures": 25}, n_wires=2, failures_by_reason={"error": 25},
                      failed_files=failed)
    text = s.to_text()
    assert "wires traced: 2 of 3 structures (1 without a path)" in text
    named = [ln for ln in text.splitlines() if ln.startswith("  /d/bad")]
    assert len(named) == FAILED_FILES_LISTED and named[0] == "  /d/bad00.pdb (error): empty file (0 bytes)"
    assert f"… and 5 more, see {tmp_path / 'failures.parquet'}" in text
    assert "index.html" not in text
    (tmp_path / "index.html").write_text("<html></html>")
    assert f"or {tmp_path / 'index.html'}" in s.to_text()
    assert "failed files" not in SurveySummary(out_dir=str(tmp_path)).to_text()
