"""Refinement statistics and the coordinate error built from them (fescan.structure.refinement,
fescan.transfer.coordinate_error).

Sources: Cruickshank DWJ 1999, Acta Cryst D 55:583-601 (the DPI estimates σ(r, B_avg), the positional
error of an atom of average B; abstract), the form of the R_free and R equations as restated in the
module docstring (constants from memory); gemmi 0.7.5 as an independent parser of the same headers;
the deposited files and their header lines per ../shared/structures/SOURCES.md.
"""

from __future__ import annotations

import gzip
import math

import gemmi
import numpy as np
import pytest

import fescan
from fescan.structure.refinement import (
    RefinementStats,
    read_refinement_stats,
    refinement_stats_from_text,
)
from fescan.transfer.coordinate_error import (
    coordinate_error,
    cruickshank_dpi,
    cruickshank_dpi_free,
    sigma_from_b,
)
from fescan.transfer.uncertainty import structure_coordinate_error
from tests.datafiles import entry_path, requires_shared


@requires_shared
def test_remark3_of_2nip_as_written():
    # 2NIP REMARK 3 (X-PLOR 3.8 template), read off the file by eye: RESOLUTION RANGE HIGH 2.20,
    # COMPLETENESS (WORKING+TEST) 92.9 %, NUMBER OF REFLECTIONS 29180, R (WORKING SET) 0.223,
    # FREE R VALUE 0.290, PROTEIN/HETEROGEN/SOLVENT ATOMS 4356/8/376, MEAN B 31.70,
    # ESD FROM LUZZATI PLOT 0.30, ESD FROM C-V LUZZATI PLOT 0.45
    s = read_refinement_stats(entry_path("2NIP"))
    assert (s.resolution, s.r_work, s.r_free, s.n_reflections) == (2.2, 0.223, 0.29, 29180)
    assert s.completeness == pytest.approx(0.929)
    assert s.n_atoms == 4356 + 8 + 376
    assert s.mean_b == pytest.approx(31.7)
    assert (s.luzzati, s.luzzati_free) == (0.30, 0.45)
    assert s.dpi_rfree is None and s.ml_error is None  # X-PLOR deposits no DPI / ESU


@requires_shared
@pytest.mark.parametrize("entry", ["2NIP", "1KF6", "3EK3", "2AXT", "5WQQ", "1BE3", "2DSX", "7FD1"])
def test_header_numbers_agree_with_gemmi(entry):
    # gemmi's own REMARK 3 / _refine reader (independent parser) gives the same numbers wherever it reads one
    ref = gemmi.read_structure(str(entry_path(entry))).meta.refinement[0]
    s = read_refinement_stats(entry_path(entry))
    for mine, theirs in ((s.resolution, ref.resolution_high), (s.r_work, ref.r_work), (s.r_free, ref.r_free)):
        if math.isfinite(theirs):
            assert mine == pytest.approx(theirs)
    if ref.reflection_count > 0:
        assert s.n_reflections == ref.reflection_count
    if math.isfinite(ref.completeness):
        assert s.completeness == pytest.approx(ref.completeness / 100.0)
    if math.isfinite(ref.mean_b):
        assert s.mean_b == pytest.approx(ref.mean_b)


@requires_shared
def test_dpi_of_2nip_by_hand():
    # Cruickshank 1999 (Acta Cryst D 55:583), R_free form: σ(r, B_avg) = sqrt(N_i/n_obs) C^(-1/3) R_free d_min.
    # 2NIP's REMARK 3: N_i = 4740, n_obs = 29180, C = 0.929, R_free = 0.290, d_min = 2.20 Å.
    # By hand: sqrt(4740/29180) = 0.40304; 0.929^(-1/3) = 1.02485; 0.40304 × 1.02485 × 0.290 × 2.20 = 0.2635 Å
    s = read_refinement_stats(entry_path("2NIP"))
    ce = coordinate_error(s, 31.7)
    assert ce.source == "computed-dpi-rfree"
    assert ce.sigma_r == pytest.approx(0.2635, abs=5e-4)
    # R form with n_params = 4 N_i (from memory): p = 29180 - 18960 = 10220;
    # sqrt(4740/10220) × 1.02485 × 0.223 × 2.20 = 0.3424 Å
    assert ce.candidates["computed-dpi-r"] == pytest.approx(0.3424, abs=5e-4)
    assert ce.candidates["deposited-luzzati"] == 0.45  # kept on record, not used before a DPI
    assert "computed" in ce.description.lower() or "Cruickshank" in ce.description


@requires_shared
def test_computed_dpi_of_3ek3_agrees_with_its_deposited_esu():
    # 3EK3's _refine: ls_number_reflns_obs 21941, ls_percent_reflns_obs 98.47, R_free 0.183, d 1.70 Å,
    # _refine_hist total 1705 atoms, and Refmac's pdbx_overall_ESU_R_Free 0.093 Å. Refmac's ESU is the
    # Cruickshank estimate (Murshudov & Dodson 1997, cited by the mmCIF dictionary for these items), so the
    # DPI computed here from the same statistics must land close to it (here 0.087 Å, within 10 %)
    s = read_refinement_stats(entry_path("3EK3"))
    dpi = cruickshank_dpi_free(s.n_atoms, s.n_reflections, s.r_free, s.resolution, s.completeness)
    assert dpi == pytest.approx(0.093, rel=0.10)
    ce = coordinate_error(s, 17.4)
    assert ce.source == "deposited-dpi-rfree" and ce.sigma_r == 0.093  # the deposited value wins
    assert ce.candidates["deposited-ml"] == 0.062  # _refine.overall_SU_ML, on record


def test_dpi_formulas_and_their_limits():
    # the two Cruickshank 1999 forms, computed by hand: sqrt(4000/40000)·1·0.25·2 = 0.1581;
    # sqrt(1000/(20000-4000))·0.20·2 = 0.1
    assert cruickshank_dpi_free(4000, 40000, 0.25, 2.0) == pytest.approx(0.158114, abs=1e-6)
    assert cruickshank_dpi(1000, 20000, 0.20, 2.0) == pytest.approx(0.1)
    # fewer reflections than parameters: the R form is undefined (Cruickshank 1999 uses R_free then)
    assert cruickshank_dpi(1000, 3000, 0.20, 2.0) is None
    assert cruickshank_dpi_free(0, 3000, 0.2, 2.0) is None
    # lower completeness raises the error as C^(-1/3)
    assert cruickshank_dpi_free(4000, 40000, 0.25, 2.0, 0.5) == pytest.approx(0.158114 * 2 ** (1 / 3), rel=1e-5)


def test_per_atom_scaling_rule():
    # σ(r, B) = DPI · sqrt(B / B_mean), per axis / sqrt(3) (rule stated in coordinate_error; from memory)
    ce = coordinate_error(RefinementStats(dpi_rfree=0.3), 20.0)
    sx = ce.sigma_x([20.0, 80.0, 5.0, 0.0])
    assert sx[0] == pytest.approx(0.3 / math.sqrt(3))
    assert sx[1] == pytest.approx(2 * 0.3 / math.sqrt(3))
    assert sx[2] == pytest.approx(0.5 * 0.3 / math.sqrt(3))
    assert sx[3] == pytest.approx(0.3 / math.sqrt(3))  # no B: ratio 1


@requires_shared
def test_file_without_statistics_falls_back_to_b_and_says_so():
    # 2FUG as stored has no REMARK 3 (SOURCES.md: assembly file); B = 8π²⟨u²⟩ (common practice, no source)
    s = read_refinement_stats(entry_path("2FUG"))
    assert s.r_free is None and s.n_reflections is None
    res = fescan.scan(entry_path("2FUG"))
    ce = structure_coordinate_error(res)
    assert ce.source == "b-factor-only" and ce.sigma_r is None
    assert "fallback" in ce.description and "no refinement statistics" in ce.description
    fmn = next(c for c in res.cofactors if c.ccd_code == "FMN")
    b = np.array([a.b_iso for a in fmn.redox_atoms])
    assert np.allclose(ce.sigma_x(b), np.sqrt(b / (8 * math.pi**2)))


@requires_shared
def test_stripped_header_falls_back(tmp_path):
    # the same deposited 2NIP file with its REMARK 3 lines removed: the DPI can no longer be computed
    text = entry_path("2NIP").read_text().splitlines(keepends=True)
    out = tmp_path / "2nip_noremark3.pdb.gz"
    with gzip.open(out, "wt") as fh:
        fh.writelines(ln for ln in text if not ln.startswith("REMARK   3"))
    s = read_refinement_stats(out)
    assert s.r_free is None and "no REMARK 3" in s.notes[0]
    assert coordinate_error(s, 31.7).source == "b-factor-only"


@requires_shared
def test_nmr_ensemble_has_unknown_error():
    # 1CLF is a solution NMR ensemble with B = 0 for every atom (SOURCES.md; read with gemmi above)
    res = fescan.scan(entry_path("1CLF"))
    ce = structure_coordinate_error(res)
    assert ce.source == "unknown" and not ce.known
    assert float(np.max(ce.sigma_x([0.0, 10.0]))) == 0.0


def test_cif_header_with_loop_and_mmjson():
    cif = ("data_X\nloop_\n_refine.pdbx_refine_id\n_refine.ls_d_res_high\n_refine.ls_R_factor_R_free\n"
           "'NEUTRON DIFFRACTION' 2.5 0.30\n'X-RAY DIFFRACTION' 1.9 0.21\n#\n"
           "_refine_hist.number_atoms_total 1500\n#\nloop_\n_atom_site.id\n1\n")
    s = refinement_stats_from_text(cif)
    assert (s.resolution, s.r_free, s.n_atoms) == (1.9, 0.21, 1500)  # the X-ray row of the loop
    assert refinement_stats_from_text('{"data_X": {}}').file_format == "mmjson"
    assert refinement_stats_from_text("REMARK   3   FREE R VALUE : NULL\n").r_free is None
    assert sigma_from_b(8 * math.pi**2) == pytest.approx(1.0)
