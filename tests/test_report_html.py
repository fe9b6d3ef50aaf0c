"""Structure reports: HTML and Markdown content, escaping of input text, determinism.

The crafted file (tests/report_fixtures.py) carries markup and script text in
its title, chain names and file name; real entries come from shared/structures
(SOURCES.md).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

import fescan.transfer.paths as wire_module
from fescan.analysis.scan import CAUTION, scan
from fescan.core.errors import ConfigError, FescanError
from fescan.report import write_report
from fescan.report.content import safe_href
from fescan.report.html import esc
from fescan.report.markdown import md_escape
from fescan.report.structure_report import POTENTIAL_STATUS, SUMMED_TIME_NAME
from fescan.transfer.couples import CITATION_KINDS
from tests.datafiles import entry_path, requires_shared
from tests.report_fixtures import CRAFTED_TITLE, IMG, SCRIPT, write_crafted, write_wire

FILES = ("report.html", "report.md", "wire.svg", "wire.png")


@pytest.fixture(scope="module")
def crafted(tmp_path_factory):
    folder = tmp_path_factory.mktemp("crafted")
    path = write_crafted(folder / 'evil<b>&"name.cif')  # markup in the file name too
    res = scan(path)
    out = write_report(res, folder / "report")
    return res, {p.name: p for p in out}


def test_crafted_input_is_read_as_written(crafted):
    res, _ = crafted
    assert res.info.title == CRAFTED_TITLE
    assert {c.chain for c in res.cofactors} == {SCRIPT, IMG}
    assert len(res.wire.path) == 2


def test_html_shows_input_markup_only_escaped(crafted):
    _, files = crafted
    text = files["report.html"].read_text(encoding="utf-8")
    for raw in ("<script", "<img", "<b>", 'evil<b>&"name'):
        assert raw not in text
    assert not re.search(r"href\s*=\s*[\"']?\s*javascript", text, re.IGNORECASE)
    assert esc(SCRIPT) in text and esc(IMG) in text and esc(CRAFTED_TITLE) in text
    assert esc('evil<b>&"name.cif') in text
    # no active content and nothing fetched from the network
    assert not re.search(r"<(script|iframe|object|embed|link|img)\b", text, re.IGNORECASE)
    assert not re.search(r"\son[a-z]+\s*=", text.replace("onerror=alert", ""))  # only the escaped payload
    assert not re.search(r"(src|href)\s*=\s*[\"']?(https?:|//)", text, re.IGNORECASE)
    assert "@import" not in text and "url(http" not in text


def test_svg_shows_input_markup_only_escaped(crafted):
    _, files = crafted
    svg = files["wire.svg"].read_text(encoding="utf-8")
    assert "<script" not in svg and "<img" not in svg
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in svg  # the chain name, as text


def test_markdown_escapes_every_special_character_of_the_input(crafted):
    _, files = crafted
    md = files["report.md"].read_text(encoding="utf-8")
    assert md_escape(CRAFTED_TITLE) in md
    # every < > [ ] | * _ ` of the crafted strings carries a backslash: no raw HTML, link or emphasis
    for line in md.splitlines():
        if "alert(1)" in line:
            assert not re.search(r"(?<!\\)[<>\[\]|`]", line.replace("| ", "").replace(" |", "")), line
    assert "![Relay diagram of" in md and "](wire.png)" in md


@pytest.mark.parametrize("text,html_out,md_out", [
    ("<b>x</b>", "&lt;b&gt;x&lt;/b&gt;", r"\<b\>x\</b\>"),  # common practice, no source
    ("a|b", "a|b", r"a\|b"),
    ("*x* _y_ `z`", "*x* _y_ `z`", r"\*x\* \_y\_ \`z\`"),
    ("[t](u)", "[t](u)", r"\[t\](u)"),
    ("back\\slash", "back\\slash", r"back\\slash"),
    ('q"uote\'s & co', "q&quot;uote&#x27;s &amp; co", "q\"uote's \\& co"),
    ("two\nlines", "two\nlines", "two lines"),
])
def test_escape_functions(text, html_out, md_out):
    assert esc(text) == html_out
    assert md_escape(text) == md_out


def test_links_cannot_carry_a_scheme():
    assert ":" not in safe_href("javascript:alert(1)")
    assert safe_href("structures/1ABC.cif-0a1b/report.html") == "structures/1ABC.cif-0a1b/report.html"


@requires_shared
def test_report_of_a_real_entry_says_what_it_must(tmp_path):
    res = scan(entry_path("2FUG"))
    out = write_report(res, tmp_path / "r")
    assert [p.name for p in out] == list(FILES)
    html = out[0].read_text(encoding="utf-8")
    md = out[1].read_text(encoding="utf-8")
    # title as in the file (SOURCES.md: "Crystal structure of the hydrophilic domain of respiratory complex I")
    assert "HYDROPHILIC DOMAIN OF RESPIRATORY COMPLEX I" in html
    assert "X-RAY DIFFRACTION" in html  # SOURCES.md: X-ray (EXPDTA)
    assert "Resolution</dt><dd>not given in the file" in html  # SOURCES.md: resolution not in file
    # SOURCES.md inventory: FMN 7/500 and nine Fe-S clusters
    for key in ("7/500", "1/439", "2/182", "3/784", "3/785", "3/786", "3/787", "6/182", "9/183", "9/184"):
        assert key in html and key in md
    assert esc(CAUTION) in html and md_escape(CAUTION) in md
    for text in (esc(SUMMED_TIME_NAME), "Mean first-passage time", "Reorganisation energy λ", "Packing density ρ",
                 "Gap limit", "Temperature", "Symmetry mates", "not included (asymmetric unit only)", "default",
                 "<td>from memory</td>", "from memory: a remembered value, to be checked"):
        assert text in html, text
    # the potentials' Status words are today's (primary, review, from memory, user, undetermined),
    # not the FOUND / MEMORY of the CCD and bond tables
    assert "FOUND" not in html and "MEMORY" not in html
    # the two transfer times are both printed, with the wire's meaning (fescan/transfer/paths.py docstring)
    assert "first-passage" in wire_module.__doc__ and "back" in html and "forward" in html
    assert '<svg' in html and "<?xml" not in html and "<!DOCTYPE svg" not in html  # SVG inlined cleanly


def test_user_potentials_are_named_in_the_report(tmp_path):
    res0 = scan(write_wire(tmp_path / "w.pdb", [0, 12, 24]))
    toml = tmp_path / "pots.toml"
    toml.write_text('[cofactor."A/501"]\npotential = -0.31\n', encoding="utf-8")
    res = scan(res0.path, potentials_file=str(toml))
    html = write_report(res, tmp_path / "r")[0].read_text(encoding="utf-8")
    assert "user file" in html and esc(str(toml)) in html and "−0.310 V" in html
    assert "<td>user</td>" in html and "user: given in the potentials file" in html


def test_potential_status_words_are_those_the_scan_gives():
    # every status a Potential can carry has its meaning in the caption (transfer/couples.py)
    assert set(POTENTIAL_STATUS) == {*CITATION_KINDS, "user", "undetermined"}


def test_same_result_gives_the_same_bytes(tmp_path):
    res = scan(write_wire(tmp_path / "w.pdb", [0, 12, 33, 45]))
    a = write_report(res, tmp_path / "a")
    b = write_report(res, tmp_path / "b")
    for x, y in zip(a, b):
        assert x.read_bytes() == y.read_bytes(), x.name


def test_unwritable_folder_is_a_clear_error(tmp_path):
    res = scan(write_wire(tmp_path / "w.pdb", [0, 12]))
    blocker = tmp_path / "file"
    blocker.write_text("x")
    with pytest.raises(ConfigError, match="cannot write the report") as e:
        write_report(res, blocker / "sub")
    assert isinstance(e.value, FescanError) and str(blocker) in str(e.value)


@pytest.mark.parametrize("name, differ", [("rb1_sound_wire.cif", True), ("rb5_rieske_heme.cif", False)])
def test_relay_section_names_the_bottleneck_not_a_slowest_hop(tmp_path, name, differ):
    # The bottleneck is the hop of largest flux control when the steady state is solved, else the
    # slowest forward hop (transfer/paths.py). In the demo rb1 the two differ (bottleneck A/503 →
    # A/504, slowest FMN A/501 → A/502); in rb5 there is no steady state and they coincide.
    res = scan(Path(__file__).resolve().parents[1] / "example_structures" / name)
    w = res.wire
    assert (w.slowest_hop is not w.bottleneck) == differ
    md = write_report(res, tmp_path / "r")[1].read_text(encoding="utf-8")
    b = w.bottleneck
    names = {c.uid: md_escape(c.label) for c in res.cofactors}
    assert f"- **Bottleneck:** {names[b.donor]} → {names[b.acceptor]}, {b.edge:.2f} Å" in md
    assert f"basis: {md_escape(w.bottleneck_basis)}" in md
    assert ("**Slowest forward hop:** " + f"{names[w.slowest_hop.donor]} →" in md) == differ
    assert "Slowest hop" not in md and "| slowest |" not in md
    rows = [line for line in md.splitlines() if line.startswith("| ") and line.rstrip().endswith("|")]
    assert sum("bottleneck" in r for r in rows) == 1
    assert sum("slowest forward hop" in r for r in rows) == int(differ)
