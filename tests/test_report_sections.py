"""Optional report sections render from the records other stages add (steady state, roles).

The steady-state record is written here in the two shapes the kinetic model gives
(per-uid dicts and per-site lists); its numbers are invented for the rendering check
only, never compared with a physical value.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from fescan.analysis.scan import scan
from fescan.report.content import runs_text
from fescan.report.markdown import md_escape, render_markdown
from fescan.report.structure_report import structure_document

EXAMPLE = Path(__file__).resolve().parent.parent / "example_structures" / "rb1_sound_wire.cif"


@pytest.fixture(scope="module")
def result():
    return scan(EXAMPLE)


def _markdown(res) -> str:
    return render_markdown(structure_document(res, "<svg></svg>"))


def test_no_steady_state_section_without_a_model(result):
    bare = replace(result, wire=replace(result.wire, steady_state=None))
    assert "Steady state" not in _markdown(bare)


@pytest.mark.parametrize("shape", ["by uid", "by site"])
def test_steady_state_section_when_present(result, shape):
    path = list(result.wire.path)
    steps = list(zip(path, path[1:]))
    if shape == "by uid":
        ss = {"flux_per_s": 1234.5, "occupancy": dict.fromkeys(path, 0.5), "sensitivity": dict.fromkeys(path, -1.0),
              "control": [{"donor": a, "acceptor": b, "coefficient": 1.0 / len(steps)} for a, b in steps],
              "source": {"pool": "NADH", "e_v": -0.32, "source": "a source text"},
              "sink": {"pool": "quinone pool", "e_v": 0.05}, "transit_time_s": 2e-3}
    else:
        ss = {"flux_per_s": 1234.5, "sites": path, "occupancy": [0.5] * len(path), "sensitivity": [-1.0] * len(path),
              "steps": [list(s) for s in steps], "control": [1.0 / len(steps)] * len(steps)}
    w = replace(result.wire)
    w.steady_state = ss
    md = _markdown(replace(result, wire=w))
    # the flux with three significant digits, in the style of fescan.core.numbers.format_quantity
    assert "Steady state (model estimate)" in md and "1.23×10^3 electrons s⁻¹" in md and "1234" not in md
    names = {c.uid: c.label for c in result.cofactors}
    assert md_escape(f"{names[steps[0][0]]} → {names[steps[0][1]]}") in md  # the control table names each step
    assert md.count("Flux control coefficient") == 1


def test_roles_and_reasons_are_reported(result):
    c0 = result.cofactors[0]
    cofs = [replace(c0, role="catalytic", subclass="test-type", role_reason="a stated reason")] + result.cofactors[1:]
    doc = structure_document(replace(result, cofactors=cofs), "<svg></svg>")
    text = " ".join(runs_text(getattr(b, "content", "")) for b in doc.blocks)
    md = render_markdown(doc)
    assert "catalytic (test-type)" in md and "a stated reason" in md
    assert text is not None
