"""docs/methods.md states the numbers the code uses (a stale page fails here)."""

from __future__ import annotations

from pathlib import Path

from fescan.cofactors.ligation import BOND_Z, CLASH_MAX, LIGAND_MAX, bond_margin
from fescan.core.options import ScanOptions
from fescan.report.diagrams import AMBIGUOUS_RATIO
from fescan.report.scene import SCALE_TOLERANCE
from fescan.transfer.rate_law import CONTACT_DISTANCE, DEFAULT_PACKING_DENSITY, DEFAULT_REORG

DOC = (Path(__file__).resolve().parent.parent / "docs" / "methods.md").read_text(encoding="utf-8")


def test_methods_page_states_the_defaults():
    o = ScanOptions()
    for text in (f"{o.cutoff:g} Å edge to edge", f"{o.gap_limit:g} Å", f"{DEFAULT_REORG:g} eV",
                 f"| {DEFAULT_PACKING_DENSITY:g} |", f"{o.temperature:g} K", f"{CONTACT_DISTANCE:g} Å contact",
                 f"{BOND_Z:g} · σ_d", f"±{SCALE_TOLERANCE:.0%}".replace("%", " %"), f"{AMBIGUOUS_RATIO:g} of",
                 f"{CLASH_MAX:g} Å to a core atom"):
        assert text in DOC, text
    for el, d in LIGAND_MAX.items():
        assert f"{d:.1f} Å" in DOC, el


def test_methods_page_widening_table_matches_the_code():
    # the table of section 3 is the formula of ligation.bond_margin, two decimals
    for res in (1.5, 2.0, 2.5, 3.0):
        m = bond_margin(resolution=res)
        assert f"| {res:.1f} Å | {m.sigma_bond:.2f} | {m.margin:.2f} |" in DOC, res
