"""Survey reports: reading saved tables, figures, the HTML index, bad folders.

Survey-like tables are built here from fescan.scan results on real entries
(shared/structures, SOURCES.md) with fescan.analysis.tables.result_tables, so these
tests do not depend on the survey module.
"""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import numpy as np
import pandas as pd
import pytest

from fescan.analysis.scan import scan
from fescan.core.errors import ConfigError
from fescan.report import write_report, write_survey_report
from fescan.report.diagrams import counts_figure, distance_by_class_figure, rate_distance_figure
from fescan.report.html import esc
from fescan.report.style import glyph_for
from fescan.report.survey_report import nearest_neighbours, read_survey_tables, survey_parameters
from tests.datafiles import entry_path, requires_shared
from tests.report_fixtures import SCRIPT, survey_tables, write_tables

pytestmark = requires_shared

FAILURE = {"file": "/data/broken <b>1.cif</b>", "error_class": "StructureFileError",
           "message": f"truncated {SCRIPT}", "reason": "error"}


@pytest.fixture(scope="module")
def results():
    return [scan(entry_path(k)) for k in ("1KF6", "1YQ9", "1BE3")]


@pytest.fixture(scope="module")
def tables(results):
    return survey_tables(results, [FAILURE])


@pytest.fixture(scope="module")
def survey_dir(tmp_path_factory, tables, results):
    folder = write_tables(tables, tmp_path_factory.mktemp("survey") / "out")
    # a per-structure report where a survey puts it: structures/<safe name>-<digest>/
    write_report(results[1], folder / "structures" / "1YQ9.pdb-0123abcd")
    return folder


def test_nearest_neighbours_match_the_inventory(tables):
    nn = nearest_neighbours(tables["cofactors"], tables["pairs"])
    y = nn[nn["file"].str.endswith("1YQ9.pdb")].set_index("cofactor_id")["nn_edge_distance"]
    # SOURCES.md 1YQ9 (min heavy-atom distances computed there with numpy, not literature values):
    # SF4 265-F3S 266 7.53 Å, F3S 266-SF4 267 9.62 Å, SF4 267-NI 10.65 Å
    assert y["1:A/265:SF4"] == pytest.approx(7.53, abs=0.02)
    assert y["1:A/266:F3S"] == pytest.approx(7.53, abs=0.02)
    assert y["1:A/267:SF4"] == pytest.approx(9.62, abs=0.02)
    b = nn[nn["file"].str.endswith("1BE3.pdb.gz")].set_index("cofactor_id")["nn_edge_distance"]
    # SOURCES.md 1BE3: within the asymmetric unit FES-HEC 51.1 Å and FES-HEM 40.8 Å, beyond the 25 Å cutoff
    assert np.isnan(b["1:E/4:FES"]) and np.isnan(b["1:D/3:HEC"])
    assert b["1:C/1:HEM"] < 14.0  # SOURCES.md 1BE3: HEM-HEM 8.15 Å (heavy atoms)


def test_index_lists_structures_links_reports_and_escapes_failures(survey_dir):
    written = write_survey_report(survey_dir)
    index = survey_dir / "index.html"
    assert written[0] == index and all(p.is_file() for p in written)
    assert {p.name for p in written[1:]} == {f"{n}.{s}" for n in ("nearest_neighbour", "rate_distance", "counts",
                                                                   "bottlenecks", "ligation_by_resolution")
                                             for s in ("svg", "png")}
    html = index.read_text(encoding="utf-8")
    for entry in ("1KF6", "1YQ9", "1BE3"):
        assert entry in html
    assert 'href="structures/1YQ9.pdb-0123abcd/report.html"' in html
    assert html.count("/report.html") == 1  # only the structure that has a report is linked
    assert "<script" not in html and "<b>1.cif" not in html
    assert esc(FAILURE["message"]) in html and esc(FAILURE["file"]) in html
    assert "4 files, 3 analysed, 1 failed" in html
    assert html.count("<svg") == 5 and "not measurements" in html


def test_csv_and_parquet_tables_give_the_same_report(tmp_path, tables):
    a = write_tables(tables, tmp_path / "pq", "parquet")
    b = write_tables(tables, tmp_path / "csv", "csv")
    ta, tb = read_survey_tables(a), read_survey_tables(b)
    for name, df in ta.items():  # same columns and dtypes; in CSV an empty string reads as missing
        assert list(df.dtypes) == list(tb[name].dtypes) and len(df) == len(tb[name]), name
        num = df.select_dtypes("number").columns
        pd.testing.assert_frame_equal(df[num], tb[name][num], obj=name)
    write_survey_report(a)
    write_survey_report(b)
    norm = [re.sub(r"Survey folder \S+|Survey report: \w+", "", (d / "index.html").read_text(encoding="utf-8"))
            for d in (a, b)]
    assert norm[0] == norm[1]


def test_survey_report_is_deterministic(tmp_path, tables):
    folder = write_tables(tables, tmp_path / "s")
    first = [p.read_bytes() for p in write_survey_report(folder, tmp_path / "o1")]
    second = [p.read_bytes() for p in write_survey_report(folder, tmp_path / "o2")]
    assert first[1:] == second[1:]  # figures
    assert first[0].replace(b"o1", b"") == second[0].replace(b"o2", b"")


def test_figures_mark_the_limit_and_follow_the_rate_law():
    fig = distance_by_class_figure([("[4Fe-4S]", glyph_for("iron-sulfur", "[4Fe-4S]"), np.array([7.5, 9.6]), 1)],
                                   gap_limit=14.0, cutoff=25.0)
    (line,) = [a for a in fig.axes[0].lines if a.get_gid() == "gap-limit"]
    assert list(line.get_xdata()) == [14.0, 14.0]  # the 14 Å rule (Page et al. 1999, Nature 402:47)
    r = np.array([3.6, 14.0])
    # REFERENCES.md §1c D-1 / D-3: log10 k = 13 at 3.6 Å and 6.843 at 14 Å when ΔG = -λ (ρ = 0.76)
    fig = rate_distance_figure(r, np.array([13.0, 6.843]), r[:1], np.array([13.0]),
                               [(-0.7, r, np.array([13.0, 6.843]))], gap_limit=14.0, log10_threshold=3.0,
                               reorg=0.7, rho=0.76)
    gids = {a.get_gid() for a in fig.axes[0].lines}
    assert {"pairs", "path-hops", "curve-0", "gap-limit", "threshold"} <= gids
    fig = counts_figure([("[4Fe-4S]", glyph_for("iron-sulfur", "[4Fe-4S]"), 3)], [("missing_ligand", 2, 0)])
    assert len(fig.axes) == 2


def test_rate_curves_in_the_svg(survey_dir):
    write_survey_report(survey_dir)
    root = ET.parse(survey_dir / "figures" / "rate_distance.svg").getroot()
    ids = {el.get("id") for el in root.iter() if el.get("id")}
    assert {"curve-0", "curve-1", "curve-2", "curve-3", "gap-limit", "pairs", "path-hops"} <= ids


@pytest.mark.parametrize("setup,message", [
    (lambda d: None, "no such survey folder"),
    (lambda d: d.mkdir(), "no survey tables found"),
    (lambda d: (d.mkdir(), (d / "cofactors.parquet").write_bytes(b"not parquet")), "cofactors.parquet: cannot read"),
    (lambda d: (d.mkdir(), (d / "pairs.csv").write_text("a,b\n1,2\n")), "pairs.csv: not a fescan 'pairs' table"),
])
def test_bad_survey_folders_are_clear_errors(tmp_path, setup, message):
    folder = tmp_path / "survey"
    setup(folder)
    with pytest.raises(ConfigError, match=re.escape(message)):
        write_survey_report(folder)


def test_options_of_the_survey_are_used(tmp_path, tables):
    folder = write_tables(tables, tmp_path / "s")
    (folder / "_survey_state").mkdir()
    (folder / "_survey_state" / "settings.json").write_text('{"scan_options": {"gap_limit": 12.0, "reorg": 0.5}}')
    opts = survey_parameters(folder)
    assert (opts.gap_limit, opts.reorg, opts.cutoff) == (12.0, 0.5, 25.0)
    html = write_survey_report(folder)[0].read_text(encoding="utf-8")
    assert "gap limit 12 Å" in html and "λ = 0.5 eV" in html
    (folder / "_survey_state" / "settings.json").write_text("{broken")
    assert survey_parameters(folder).gap_limit == 14.0  # defaults when unreadable
