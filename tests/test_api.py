"""The public API named in the issues is importable from the package top level."""

from __future__ import annotations

import pytest

import fescan
from tests.datafiles import entry_path, requires_shared


def test_public_names():
    for name in ("scan", "survey", "compare", "write_report", "write_survey_report", "log10_hop_rate",
                 "reaction_gibbs_kj", "ScanResult", "ScanOptions", "FescanError"):
        assert callable(getattr(fescan, name)), name
    # Page et al. 1999 (REFERENCES.md s1c D-1): log10 k = 13 at R = 3.6 Å, ΔG = -λ
    assert fescan.log10_hop_rate(3.6, -0.7) == pytest.approx(13.0)
    with pytest.raises(AttributeError):
        fescan.no_such_name  # noqa: B018


@requires_shared
def test_write_report_from_the_top_level(tmp_path):
    res = fescan.scan(entry_path("1FDN"))
    paths = fescan.write_report(res, tmp_path)
    assert {p.suffix for p in paths} >= {".html", ".md", ".svg", ".png"}
    assert all(p.is_file() for p in paths)
