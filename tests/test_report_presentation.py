"""How the reports present what they show: the points of a new-user review of the demo reports.

Every test here runs on the invented demo files of ``example_structures/`` (built by
``example_structures/build_examples.py``) or on numbers made up in the test, so none
needs ../shared. What the demo files hold (from their build script and README):
rb1 a sound wire with a steady state, rb2 the same wire with an 18 Å gap, rb3 three
ligation warnings, rb5 a wire without a steady state. Numbers are compared with a
tolerance or by their digits, never byte for byte.
"""

from __future__ import annotations

import html as html_lib
import json
import re
from pathlib import Path

import numpy as np
import pytest

from fescan.analysis.scan import scan
from fescan.report import style, write_report, write_survey_report
from fescan.report.content import Run, Table
from fescan.report.diagrams import (
    RATE_MARGIN,
    WARNING_TEXT,
    counts_figure,
    rate_distance_figure,
    relay_figure,
)
from fescan.report.html import render_html
from fescan.report.labels import number, plain_words, plural, quantity, structure_name, tidy_numbers
from fescan.report.markdown import md_escape
from fescan.report.structure_report import SUMMED_TIME_NAME, site_capacities
from fescan.report.survey_report import TITLE_CHARS, counts_caption
from tests.browser import requires_chromium
from tests.report_fixtures import survey_tables, write_tables

EXAMPLES = Path(__file__).resolve().parents[1] / "example_structures"
NAMES = {"rb1": "rb1_sound_wire.cif", "rb2": "rb2_gap.pdb", "rb3": "rb3_misligated.pdb.gz",
         "rb4": "rb4_split_atoms.pdb", "rb5": "rb5_rieske_heme.cif"}

#: A number as the reports write it: optional sign, digits, optional power of ten.
NUMBER = re.compile(r"[−-]?(\d+(?:\.\d+)?)(?:×10\^[−-]?\d+)?")


@pytest.fixture(scope="module")
def results():
    return {k: scan(EXAMPLES / name) for k, name in NAMES.items()}


@pytest.fixture(scope="module")
def reports(results, tmp_path_factory):
    out = {}
    for k in ("rb1", "rb2", "rb3", "rb5"):
        paths = write_report(results[k], tmp_path_factory.mktemp(k))
        out[k] = {p.name: p for p in paths}
    return out


@pytest.fixture(scope="module")
def survey(results, tmp_path_factory):
    folder = write_tables(survey_tables(list(results.values())), tmp_path_factory.mktemp("survey") / "out")
    write_survey_report(folder)
    return folder


def significant(text: str) -> int:
    """Significant digits of the first number of a text (trailing zeros of a decimal count)."""
    m = NUMBER.search(text)
    assert m is not None, text
    digits = m.group(1).replace(".", "").lstrip("0")
    return len(digits) if "." in m.group(1) else len(digits.rstrip("0")) or 1


# --------------------------------------------------------------------------- 1. counts figure


def _bottom(fig):
    return next(ax for ax in fig.axes if ax.get_title(loc="left") == "findings of the checks")


@pytest.mark.parametrize("flags, kinds", [
    ([("incomplete_cluster", 1, 0), ("missing_ligand", 1, 0), ("stretched_bond", 1, 0)], ["warning"]),
    ([("stretched_bond", 2, 1), ("header_mismatch", 0, 3)], ["warning", "note"]),
    ([("header_mismatch", 0, 1)], ["note"]),
])
def test_counts_figure_names_findings_in_words_with_whole_number_ticks_and_a_clear_legend(flags, kinds):
    fig = counts_figure([("[4Fe-4S]", style.glyph_for("iron-sulfur", "[4Fe-4S]"), 3)], flags)
    fig.canvas.draw()
    ax = _bottom(fig)
    labels = [t.get_text() for t in ax.get_yticklabels()]
    assert labels == [plain_words(code) for code, _, _ in flags]
    assert all("_" not in lab for lab in labels)
    lo, hi = ax.get_xlim()
    ticks = [t for t in ax.get_xticks() if lo - 1e-9 <= t <= hi + 1e-9]
    assert len(ticks) >= 2 and all(abs(t - round(t)) < 1e-9 for t in ticks), ticks  # counts: integer ticks
    (legend,) = fig.legends
    assert [t.get_text() for t in legend.get_texts()] == kinds  # only the kinds present
    renderer = fig.canvas.get_renderer()
    box = legend.get_window_extent(renderer)
    for bar in ax.patches:  # the legend never covers a bar
        assert not box.overlaps(bar.get_window_extent(renderer))
    assert box.y1 <= ax.get_window_extent(renderer).y0
    caption = counts_caption(flags)
    assert ("hatched" in caption) == (kinds == ["warning", "note"])


def test_counts_figure_without_findings_has_no_legend():
    fig = counts_figure([("FMN", style.glyph_for("flavin", "FMN"), 2)], [])
    assert fig.legends == [] and "none found" in counts_caption([])


# --------------------------------------------------------------------------- 2. rate figure


def _rate_figure(pairs_logk, path_logk=(6.0,)):
    r = np.linspace(5.0, 22.0, len(pairs_logk))
    rr = np.array([3.6, 25.0])
    # REFERENCES.md §1c D-1: log10 k = 13 at 3.6 Å when ΔG = -λ; the second end is not checked here
    return rate_distance_figure(r, np.asarray(pairs_logk, dtype=float), np.array([8.0] * len(path_logk)),
                                np.asarray(path_logk, dtype=float), [(-0.7, rr, np.array([13.0, 0.3]))],
                                gap_limit=14.0, log10_threshold=3.0, reorg=0.7, rho=0.76)


@pytest.mark.parametrize("pairs", [[-3.07, 1.0, 9.0], [-8.5, 12.0, 14.6], [0.5, 5.0, 12.0]])
def test_rate_axis_covers_every_finite_point_with_a_margin(pairs):
    fig = _rate_figure(pairs)
    lo, hi = fig.axes[0].get_ylim()
    finite = np.array(pairs + [6.0])
    assert lo <= finite.min() - 0.9 * RATE_MARGIN and hi >= finite.max() + 0.9 * RATE_MARGIN
    assert lo <= -2.0 and hi >= 13.5  # never narrower than the law's range
    assert not [a for a in fig.axes[0].texts if a.get_gid() == "not-drawn"]


def test_rate_figure_says_how_many_rates_it_cannot_draw():
    fig = _rate_figure([float("-inf"), 2.0, float("nan")])
    (note,) = [a for a in fig.axes[0].texts if a.get_gid() == "not-drawn"]
    assert note.get_text().startswith("2 rates")


def test_demo_survey_rate_figure_draws_its_lowest_pair(survey):
    import pandas as pd

    pairs = pd.read_parquet(survey / "pairs.parquet")
    low = float(np.nanmin(pairs[["log10_k_forward", "log10_k_back"]].to_numpy(float)))
    assert low < -2.0  # rb2's 18 Å gap: the reason for this test (rates down to about 10^-3 s⁻¹)
    svg = (survey / "figures" / "rate_distance.svg").read_text(encoding="utf-8")
    assert 'id="pairs"' in svg
    caption = (survey / "index.html").read_text(encoding="utf-8")
    assert "spans every point" in caption


# --------------------------------------------------------------------------- 3. steady-state table


def _md_table(md: str, first_header: str) -> tuple[list[str], list[list[str]]]:
    lines = md.splitlines()
    start = next(k for k, line in enumerate(lines) if line.startswith(f"| {first_header} |")
                 and "Electrons held" in line)
    head = [c.strip() for c in lines[start].strip("|").split("|")]
    rows = []
    for line in lines[start + 2:]:
        if not line.startswith("|"):
            break
        rows.append([c.strip() for c in line.strip("|").split("|")])
    return head, rows


def _value(text: str) -> float:
    return float(text.replace("−", "-"))


def test_steady_state_table_shows_electrons_held_within_capacity(results, reports):
    res = results["rb1"]
    ss = res.wire.steady_state
    md = reports["rb1"]["report.md"].read_text(encoding="utf-8")
    assert not re.search(r"\bfraction\b", md, re.IGNORECASE)  # "diffraction" is fine
    head, rows = _md_table(md, "Cofactor")
    assert head[:3] == ["Cofactor", "Electrons held (mean)", "Capacity (electrons)"]
    names = {md_escape(c.label): c.uid for c in res.cofactors}
    caps = site_capacities(ss, list(res.wire.path))
    seen = set()
    for name, held, cap, _sens in rows:
        uid = names[name]
        seen.add(uid)
        assert int(cap) == caps[uid] in (1, 2)
        assert -1e-9 <= _value(held) <= int(cap) + 1e-9
        # the JSON's occupancy holds mean electrons: the table shows the same number, rounded
        assert _value(held) == pytest.approx(ss["occupancy"][uid], abs=0.006)
    assert seen == set(res.wire.path)
    flavin = next(c.uid for c in res.cofactors if c.category == "flavin")
    assert caps[flavin] == 2 and ss["occupancy"][flavin] > 1.0  # the case of the review: an FMN holding ~2


def test_capacities_from_either_record_shape():
    assert site_capacities({"sensitivity_couples": {"a": [1.0, 2.0], "b": [0.5]}}) == {"a": 2, "b": 1}
    assert site_capacities({"distribution": [[0.1, 0.9], [0.2, 0.3, 0.5]]}, ["a", "b"]) == {"a": 1, "b": 2}
    assert site_capacities({}) == {}


# --------------------------------------------------------------------------- 4. digits


def test_model_estimates_carry_at_most_three_significant_digits(reports):
    for k in ("rb1", "rb2"):
        md = reports[k]["report.md"].read_text(encoding="utf-8")
        html = reports[k]["report.html"].read_text(encoding="utf-8")
        for label in ("Electron flux:", "Steady-state flux:", "Transit time:", "Mean first-passage time:",
                      SUMMED_TIME_NAME):
            for line in (x for x in md.splitlines() if md_escape(label) in x):
                value = line.split(":**", 1)[1]
                assert significant(value) <= 3, line
        ratio = re.search(r"first-passage time is (\S+) times the sum", md)
        if ratio:
            assert significant(ratio.group(1)) <= 3, ratio.group(0)
        for text in (md, html):
            assert not re.search(r"\d\.\d+e[+-]\d", text)  # no computer notation (4.57e+03)
            assert "−0.00" not in text and "-0.00 " not in text  # no negative zero
    flux = reports["rb1"]["report.md"].read_text(encoding="utf-8")
    assert "142778" not in flux


@pytest.mark.parametrize("value, text", [(142778.563, "1.43×10^5"), (35530.2, "3.55×10^4"), (0.37291, "0.373"),
                                         (-12.345, "−12.3")])
def test_quantity_gives_three_digits_in_one_style(value, text):
    assert quantity(value) == text


def test_no_negative_zero_and_computer_notation_is_rewritten():
    assert number(-0.001) == "0.00" and number(-0.0) == "0.00" and number(-0.006) == "−0.01"
    assert tidy_numbers("is 4.57e+03 times; 1.2e-05 s; id 1bf36e09") == "is 4.57×10^3 times; 1.2×10^−5 s; id 1bf36e09"


# --------------------------------------------------------------------------- 5. summed time


def test_summed_time_has_the_terminal_name_and_a_short_interval_note(results, reports):
    from fescan.report.text import render_text

    assert SUMMED_TIME_NAME.lower() in render_text(results["rb1"]).lower()  # the terminal's words
    md = reports["rb1"]["report.md"].read_text(encoding="utf-8")
    summary = md.split("## Electron relay")[0]
    (line,) = [x for x in summary.splitlines() if md_escape(SUMMED_TIME_NAME) in x]
    assert "Transfer time (sum of hops)" not in md
    note = line.split(")", 2)[-1]  # after the value and its interval
    assert len(note.split()) <= 30 and "sqrt" not in line and "sigma" not in line, line
    params = md.split("## Parameters")[1]
    assert "Interval of the sum of forward hop times" in params and "σ(x) = √(B / 8π²)" in params


# --------------------------------------------------------------------------- 6, 7. relay diagram


def _legend_texts(fig) -> list[str]:
    return [t.get_text() for leg in fig.legends for t in leg.get_texts()]


@pytest.mark.parametrize("key, words", [("rb1", "bottleneck (largest flux control)"),
                                        ("rb5", "bottleneck (slowest forward hop)")])
def test_bottleneck_legend_says_how_it_was_chosen(results, key, words):
    res = results[key]
    fig, _ = relay_figure(res)
    texts = _legend_texts(fig)
    assert words in texts and "bottleneck" not in texts
    basis = res.wire.bottleneck_basis
    assert ("flux-control" in basis) == ("flux control" in words)


def test_cofactors_with_warnings_carry_a_legended_mark(results, reports):
    for key in ("rb1", "rb3"):
        res = results[key]
        warned = {c.uid for c in res.cofactors if any(f.severity == "warning" for f in c.flags)}
        svg = reports[key]["wire.svg"].read_text(encoding="utf-8")
        marked = {c.uid for c in res.cofactors if f'id="warning-{style.svg_id(c.uid)}"' in svg}
        assert marked == warned
        fig, _ = relay_figure(res)
        assert (WARNING_TEXT in _legend_texts(fig)) == bool(warned)
    assert any(any(f.severity == "warning" for f in c.flags) for c in results["rb3"].cofactors)
    caption = reports["rb3"]["report.md"].read_text(encoding="utf-8")
    assert "check warning" in caption


# --------------------------------------------------------------------------- 8. survey table


def test_survey_titles_are_shortened_with_the_whole_title_as_tooltip(results, survey):
    page = (survey / "index.html").read_text(encoding="utf-8")
    spans = {html_lib.unescape(k): html_lib.unescape(v)
             for k, v in re.findall(r'<span title="([^"]*)">([^<]*)</span>', page)}
    shortened = 0
    for res in results.values():
        title = " ".join(res.info.title.split())
        if len(title) > TITLE_CHARS:
            shortened += 1
            assert title in spans, title
            assert spans[title].endswith("…") and len(spans[title]) <= TITLE_CHARS
            assert title.startswith(spans[title][:-1])
    assert shortened >= 3  # the demo titles run to about 150 characters


def test_tooltip_is_escaped():
    page = render_html(_doc_with(Run("short", tooltip='"><script>x</script>')))
    assert 'title="&quot;&gt;&lt;script&gt;x&lt;/script&gt;"' in page and "<script>x" not in page


def _doc_with(run: Run):
    from fescan.report.content import Document

    return Document("t").add(Table(["Title"], [[run]], classes=("text",)))


@requires_chromium
def test_survey_structures_table_fits_1400_px(survey, monkeypatch):
    from tests import browser

    probe = browser._PROBE.replace("outside: wide.slice(0, 20)}", "outside: wide.slice(0, 20), tables: Array.prototype"
                                   ".map.call(document.querySelectorAll('div.scroll'), function (b) { return "
                                   "{head: b.querySelector('th').textContent, client: b.clientWidth, scroll: "
                                   "b.scrollWidth}; })}")
    assert probe != browser._PROBE
    monkeypatch.setattr(browser, "_PROBE", probe)
    m = browser.measure_page(survey / "index.html", width=1400)
    assert m["scrollWidth"] <= 1400 and m["outside"] == [], m
    (table,) = [t for t in m["tables"] if t["head"] == "File"]
    assert table["scroll"] <= table["client"], json.dumps(table)  # no horizontal scrolling


# --------------------------------------------------------------------------- 9. parameters


def test_parameters_say_how_entry_and_exit_were_chosen(results, reports):
    md = reports["rb1"]["report.md"].read_text(encoding="utf-8")
    (line,) = [x for x in md.splitlines() if x.startswith("- **Entry and exit:**")]
    assert "default → default" not in line
    assert "chosen by fescan from the cofactors' chemistry" in line
    assert md_escape(results["rb1"].wire.how_chosen.split(": ", 1)[1]) in line


# --------------------------------------------------------------------------- 10. words and names


def test_survey_facts_are_pluralised(survey):
    text = re.sub(r"<[^>]+>", "", (survey / "index.html").read_text(encoding="utf-8"))
    assert "1 gap or slow hop" in text  # rb2: one hop over the gap limit
    assert "1 gaps" not in text and "5 wires" in text


def test_plural():
    assert plural(1, "gap or slow hop", "gaps or slow hops") == "1 gap or slow hop"
    assert plural(0, "wire") == "0 wires" and plural(2, "hop") == "2 hops"


def test_wire_titles_name_every_structure_alike(results):
    # rb1 declares the entry id RB1 in its header, rb2 none: the titles still take one form
    assert results["rb1"].info.entry_id == "RB1" and results["rb2"].info.entry_id == "rb2_gap"
    for key in ("rb1", "rb2", "rb3"):
        fig, _ = relay_figure(results[key])
        title = fig.axes[0].get_title(loc="left")
        assert title.startswith(structure_name(NAMES[key]) + ": "), title
    assert structure_name(NAMES["rb3"]) == "rb3_misligated"
