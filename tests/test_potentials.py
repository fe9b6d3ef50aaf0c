"""Tests of fescan.transfer.potentials: the packaged default table and the user TOML overrides.

Reference values are from reference/REFERENCES.md section 3; the source is written beside
each check.
"""

from __future__ import annotations

import csv
import re
from importlib import resources
from pathlib import Path

import pytest

from fescan.core.errors import ConfigError
from fescan.core.records import CATEGORIES, Cofactor
from fescan.transfer.couples import couple_table, reservoir_potential
from fescan.transfer.potentials import (
    CITATION_KINDS,
    CLASS_DEFAULT,
    POTENTIAL_RANGE_V,
    STEPS,
    Potential,
    UserParameters,
    assign_parameters,
    assign_potentials,
    default_couples,
    default_potential,
    load_user_file,
    load_user_parameters,
    reorganisation_overrides,
)

COLUMNS = ["class", "subclass", "category", "couple", "step", "e_v", "e_low_v", "e_high_v", "citation",
           "citation_kind"]
#: Classes fescan detects that must have couples (or an explicit "undetermined" row).
REQUIRED_CLASSES = ("[2Fe-2S]", "Rieske [2Fe-2S]", "[3Fe-4S]", "linear [3Fe-4S]", "[4Fe-4S]", "[4Fe-3S]",
                    "Fe(Cys)4", "mononuclear Fe", "FMN", "FAD", "riboflavin", "flavin", "ubiquinone",
                    "menaquinone", "plastoquinone", "quinone", "heme b", "heme c", "heme a", "heme o", "heme d",
                    "siroheme", "heme", "Cu", "CuA")


def make_cofactor(
    chain: str = "A",
    seqnum: int = 56,
    icode: str = "",
    cls: str = "[4Fe-4S]",
    category: str = "iron-sulfur",
    ccd_code: str | None = "SF4",
    model: int = 1,
) -> Cofactor:
    """A bare cofactor record (no atoms): enough for potential assignment."""
    return Cofactor(
        model=model,
        chain=chain,
        seqnum=seqnum,
        icode=icode,
        ccd_code=ccd_code,
        category=category,
        cls=cls,
        composition="",
        residues=(),
        atoms=(),
        redox_atoms=(),
        centroid=(0.0, 0.0, 0.0),
        mean_occupancy=1.0,
        mean_b=20.0,
        detected_by="ccd",
    )


@pytest.fixture
def cofactors() -> list[Cofactor]:
    return [
        make_cofactor("A", 56, "", "[4Fe-4S]", "iron-sulfur", "SF4"),
        make_cofactor("A", 1, "", "FMN", "flavin", "FMN"),
        make_cofactor("B", 245, "A", "heme c", "heme", "HEC"),
    ]


def write(tmp_path: Path, text: str, name: str = "params.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


# --------------------------------------------------------------------------- packaged table


def test_csv_columns():
    text = resources.files("fescan").joinpath("data").joinpath("potentials.csv").read_text("utf-8")
    assert next(csv.reader(text.splitlines())) == COLUMNS


def test_required_classes_and_category_fallbacks():
    rows = couple_table()
    classes = {r.cls for r in rows}
    assert set(REQUIRED_CLASSES) <= classes
    assert {r.category for r in rows if r.cls == "*"} >= set(CATEGORIES)


_BAD_SOURCE = re.compile(r"https?://|www\.|\.org\b|\.com\b|mirror|wikipedia|grokipedia|encyclop|code file|"
                         r"github|equilibrator|redox\.tsv|arxiv", re.IGNORECASE)
_CITATION = re.compile(r"\b(1[89]\d\d|20\d\d)\b.*\d+:\d+")  # "Author 1999, Journal 402:47"


@pytest.mark.parametrize("row", couple_table(), ids=lambda r: f"{r.cls}|{r.subclass}|{r.category}|{r.step}")
def test_every_row_cites_a_paper_or_says_from_memory(row):
    # the rule: every row a primary citation (paper or handbook: author, year, journal volume:page)
    # or "from memory"; never a web page, mirror, encyclopedia or code file
    assert row.citation_kind in CITATION_KINDS
    assert not _BAD_SOURCE.search(row.citation), row.citation
    if row.e_v is None:  # an undetermined class says why, from memory
        assert row.citation_kind == "from memory" and "from memory" in row.citation
    else:
        assert _CITATION.search(row.citation), row.citation
        assert row.e_low_v <= row.e_v <= row.e_high_v
        assert POTENTIAL_RANGE_V[0] <= row.e_low_v and row.e_high_v <= POTENTIAL_RANGE_V[1]
    assert row.step in STEPS and row.couple


def test_the_source_check_fails_on_a_url_or_mirror():
    # the check above must be able to fail
    for bad in ("Smith 2001, J X 1:2 (https://example.org)", "a Polish mirror of an encyclopedia",
                "quoted in a public code file"):
        assert _BAD_SOURCE.search(bad)


def test_two_electron_classes_have_both_couples_and_one_electron_classes_one():
    for cls, cat in (("FMN", "flavin"), ("FAD", "flavin"), ("ubiquinone", "quinone"),
                     ("plastoquinone", "quinone"), ("menaquinone", "quinone")):
        assert [p.step for p in default_couples(cls, cat)] == ["ox/sq", "sq/red"]
    for cls, cat in (("[4Fe-4S]", "iron-sulfur"), ("heme c", "heme"), ("CuA", "copper")):
        assert [p.step for p in default_couples(cls, cat)] == ["1e"]


def test_hipip_is_a_subclass_couple_not_the_ferredoxin_default():
    # Stephens, Jollie & Warshel 1996 Chem Rev 96:2491 (from memory): HiPIP 3+/2+ about +0.1 to +0.45 V,
    # ferredoxin-type 2+/1+ about -0.7 to -0.25 V
    fd = default_potential("[4Fe-4S]", "iron-sulfur")
    hipip = default_potential("[4Fe-4S]", "iron-sulfur", "HiPIP-type")
    assert fd.couple == "[4Fe-4S] 2+/1+" and fd.e_v < -0.2
    assert hipip.couple == "[4Fe-4S] 3+/2+" and hipip.e_v > 0.2
    assert fd.basis == CLASS_DEFAULT == "class default, not measured for this protein"
    assert "HiPIP-type" in hipip.basis and "not measured for this protein" in hipip.basis


def test_subclass_rows_for_couples_by_enzyme():
    # Euro et al. 2008 Biochemistry 47:3185 (primary, seen): complex I [2Fe-2S] about -0.25 V;
    # de Causmaecker et al. 2019 PNAS 116:19458 (primary, seen): QB/QB- about +0.09 V
    assert default_potential("[2Fe-2S]", "iron-sulfur", "complex I (N1a/N1b)").e_v == pytest.approx(-0.25)
    assert default_potential("plastoquinone", "quinone", "photosystem II QB").e_v == pytest.approx(0.09)
    # QA has no physiological second couple: the class row stands in for sq/red
    qa = default_couples("plastoquinone", "quinone", "photosystem II QA")
    assert qa[0].e_v == pytest.approx(-0.145) and "QA" in qa[0].basis
    assert qa[1].basis == CLASS_DEFAULT


def test_unknown_subclass_falls_back_to_class_and_unknown_class_is_undetermined():
    assert default_potential("heme c", "heme", "no such type") == default_potential("heme c", "heme")
    assert default_potential("[8Fe-7S]", "iron-sulfur").couple == "P1+/PN"
    odd = default_potential("mystery", "no-such-category")
    assert not odd.determined and odd.status == "undetermined"
    assert not default_potential("linear [3Fe-4S]", "iron-sulfur").determined


def test_every_ccd_table_class_has_a_row_or_a_category_fallback():
    path = resources.files("fescan").joinpath("data").joinpath("ccd_cofactors.csv")
    for rec in csv.DictReader(path.read_text("utf-8").splitlines()):
        if rec["category"] == "not analysed":
            continue
        assert default_couples(rec["class"], rec["category"])[0].source


def test_reservoirs():
    # Thauer, Jungermann & Decker 1977 Bacteriol Rev 41:100 (from memory): NAD+/NADH -0.32 V at pH 7
    assert reservoir_potential("NAD+/NADH").e_v == pytest.approx(-0.32)
    assert reservoir_potential("H+/H2 at pH 7").e_v == pytest.approx(-0.414)


# --------------------------------------------------------------------------- user file

EXAMPLE = """
[cofactor."A/56"]
potential = -0.42      # V
reorganisation = 0.6   # eV, optional
[cofactor."B/245A"]
potential = 0.06
"""


def test_load_user_parameters_example(tmp_path):
    path = write(tmp_path, EXAMPLE)
    params = load_user_parameters(path)
    assert params == {
        "A/56": UserParameters("A/56", str(path), potential=-0.42, reorganisation=0.6),
        "B/245A": UserParameters("B/245A", str(path), potential=0.06, reorganisation=None),
    }


def test_load_user_parameters_normalises_and_accepts_spellings(tmp_path):
    path = write(
        tmp_path,
        '[cofactor."A/056"]\npotential = 0\n[cofactor." C / -3 "]\nreorganization = 1\n',
    )
    params = load_user_parameters(str(path))
    assert params["A/56"].potential == 0.0
    assert params["C/-3"].reorganisation == 1.0
    assert params["C/-3"].potential is None


BAD_FILES = [
    ("syntax", '[cofactor."A/56"\npotential = -0.4\n', "not valid TOML"),
    ("unquoted_value", '[cofactor."A/56"]\npotential = low\n', "not valid TOML"),
    ("empty", "", "no cofactor tables"),
    ("no_cofactor_table", "potential = 0.1\n", "unknown top-level"),
    ("cofactor_not_table", 'cofactor = "A/56"\n', "no cofactor tables"),
    ("entry_not_table", '[cofactor]\n"A/56" = 0.1\n', "must be a table"),
    ("unknown_key", '[cofactor."A/56"]\npotential = 0.1\nlambda = 0.7\n', "unknown key"),
    ("empty_entry", '[cofactor."A/56"]\n', "is empty"),
    ("string_value", '[cofactor."A/56"]\npotential = "-0.4"\n', "must be a number"),
    ("bool_value", '[cofactor."A/56"]\npotential = true\n', "must be a number"),
    ("array_value", '[cofactor."A/56"]\npotential = [0.1]\n', "must be a number"),
    ("nan_value", '[cofactor."A/56"]\npotential = nan\n', "finite"),
    ("too_high", '[cofactor."A/56"]\npotential = 1.6\n', "outside"),
    ("too_low", '[cofactor."A/56"]\npotential = -2\n', "outside"),
    ("millivolts", '[cofactor."A/56"]\npotential = -420\n', "outside"),
    ("reorg_zero", '[cofactor."A/56"]\nreorganisation = 0.0\n', "reorganisation must be > 0"),
    ("reorg_negative", '[cofactor."A/56"]\nreorganisation = -0.5\n', "reorganisation must be > 0"),
    ("reorg_inf", '[cofactor."A/56"]\nreorganisation = inf\n', "finite"),
    ("both_spellings", '[cofactor."A/56"]\nreorganisation = 0.6\nreorganization = 0.6\n', "either"),
    ("bad_selector", '[cofactor."A56"]\npotential = 0.1\n', "CHAIN/RESNUM"),
    ("bad_selector_resnum", '[cofactor."A/x1"]\npotential = 0.1\n', "CHAIN/RESNUM"),
    (
        "repeated_selector",
        '[cofactor."A/56"]\npotential = 0.1\n[cofactor."A/056"]\npotential = 0.2\n',
        "twice",
    ),
]


@pytest.mark.parametrize(("name", "text", "match"), BAD_FILES, ids=[b[0] for b in BAD_FILES])
def test_bad_toml_files(tmp_path, name, text, match):
    path = write(tmp_path, text, name=f"{name}.toml")
    with pytest.raises(ConfigError, match=match) as info:
        load_user_parameters(path)
    assert str(path) in str(info.value)


def test_bad_encoding(tmp_path):
    path = tmp_path / "latin1.toml"
    path.write_bytes('[cofactor."A/56"]\n# caf\xe9\npotential = 0.1\n'.encode("latin-1"))
    with pytest.raises(ConfigError, match=re.escape(str(path)) + ".*UTF-8"):
        load_user_parameters(path)


@pytest.mark.parametrize("kind", ["missing", "directory"])
def test_unreadable_file(tmp_path, kind):
    path = tmp_path / "missing.toml" if kind == "missing" else tmp_path
    with pytest.raises(ConfigError, match=re.escape(str(path)) + ".*cannot read"):
        load_user_parameters(path)


# --------------------------------------------------------------------------- assignment


def test_assign_defaults_without_user_file(cofactors):
    pots = assign_potentials(cofactors)
    assert set(pots) == {c.uid for c in cofactors}
    assert all(p.origin == "default" for p in pots.values())
    # Anderson 1983 BBA 722:158 (from memory): free FMN ox/sq -0.31 V; the working couple is ox/sq
    assert pots["1:A/1:FMN"].e_v == pytest.approx(-0.31) and pots["1:A/1:FMN"].step == "ox/sq"
    assert reorganisation_overrides(cofactors) == {}


def test_toml_override(tmp_path, cofactors):
    path = write(tmp_path, EXAMPLE)
    pots = assign_potentials(cofactors, path)
    assert pots["1:A/56:SF4"] == Potential(
        e_v=-0.42,
        low_v=-0.42,
        high_v=-0.42,
        source="user value for A/56",
        origin=f"user file {path}",
        status="user",
        couple="[4Fe-4S] 2+/1+",
        step="1e",
        basis="user value",
    )
    assert pots["1:B/245A:HEC"].e_v == pytest.approx(0.06)
    assert pots["1:B/245A:HEC"].origin == f"user file {path}"
    assert pots["1:A/1:FMN"].origin == "default"
    assert reorganisation_overrides(cofactors, path) == {"1:A/56:SF4": 0.6}


def test_loaded_mapping_is_accepted(tmp_path, cofactors):
    params = load_user_parameters(write(tmp_path, EXAMPLE))
    assert assign_potentials(cofactors, params) == assign_potentials(
        cofactors, write(tmp_path, EXAMPLE)
    )
    assert reorganisation_overrides(cofactors, params) == {"1:A/56:SF4": 0.6}


def test_reorganisation_only_keeps_default_potential(tmp_path, cofactors):
    path = write(tmp_path, '[cofactor."A/1"]\nreorganisation = 0.5\n')
    pots = assign_potentials(cofactors, path)
    assert pots["1:A/1:FMN"].origin == "default"
    assert reorganisation_overrides(cofactors, path) == {"1:A/1:FMN": 0.5}


def test_unknown_selectors_are_reported(tmp_path, cofactors):
    path = write(tmp_path, EXAMPLE + '[cofactor."Z/9"]\npotential = 0.1\n')
    with pytest.raises(ConfigError) as info:
        assign_potentials(cofactors, path)
    msg = str(info.value)
    assert str(path) in msg
    assert "Z/9" in msg
    assert "available: A/1, A/56, B/245A" in msg
    with pytest.raises(ConfigError, match="Z/9"):
        reorganisation_overrides(cofactors, path)


def test_override_applies_to_every_model(tmp_path):
    cofs = [make_cofactor(model=1), make_cofactor(model=2)]
    pots = assign_potentials(cofs, write(tmp_path, EXAMPLE.split('[cofactor."B')[0]))
    assert pots["1:A/56:SF4"].e_v == pots["2:A/56:SF4"].e_v == pytest.approx(-0.42)


def test_unclassified_cofactor_is_undetermined_until_given(tmp_path):
    odd = make_cofactor("C", 7, "", "mystery", "no-such-category", None)
    assert not assign_potentials([odd])["1:C/7:-"].determined
    pots = assign_potentials([odd], write(tmp_path, '[cofactor."C/7"]\npotential = 0.2\n'))
    assert pots["1:C/7:-"].e_v == pytest.approx(0.2)


def test_two_electron_couples_full_id_role_and_reservoirs(tmp_path, cofactors):
    # Sled et al. 1994 Biochemistry 33:10069 (from memory): complex I FMN ox/sq -0.414, sq/red -0.336 V
    path = write(tmp_path, '[cofactor."1:A/1:FMN"]\npotential_ox_sq = -0.414\npotential_sq_red = -0.336\n'
                           'role = "catalytic"\n[cofactor."A/56"]\npotential = -0.25\n'
                           '[reservoirs]\nsource = -0.32\nsink = 0.09\n')
    uf = load_user_file(path)
    assert uf.reservoirs == {"source": -0.32, "sink": 0.09}
    params = assign_parameters(cofactors, uf)
    fmn = params["1:A/1:FMN"]
    assert fmn.two_electron and fmn.role == "catalytic" and str(path) in fmn.role_origin
    assert fmn.working().e_v == pytest.approx(-0.414) and fmn.working(entry=True).e_v == pytest.approx(-0.336)
    assert fmn.working(entry=True).basis == "user value"
    assert params["1:A/56:SF4"].working().e_v == pytest.approx(-0.25)


@pytest.mark.parametrize(("text", "match"), [
    ('[cofactor."A/1"]\npotential = -0.3\n', "two one-electron couples"),
    ('[cofactor."A/56"]\npotential_ox_sq = -0.3\n', "one-electron centre"),
])
def test_couple_keys_must_fit_the_cofactor(tmp_path, cofactors, text, match):
    with pytest.raises(ConfigError, match=match):
        assign_parameters(cofactors, write(tmp_path, text))


@pytest.mark.parametrize(("text", "match"), [
    ('[cofactor."A/1"]\npotential = -0.3\npotential_ox_sq = -0.4\n', "not both"),
    ('[cofactor."A/1"]\nrole = "boss"\n', "role must be one of"),
    ('[reservoirs]\nsauce = 0.1\n', "unknown key"),
    ('[reservoirs]\nsource = 3.0\n', "outside"),
])
def test_bad_new_keys(tmp_path, text, match):
    path = write(tmp_path, text)
    with pytest.raises(ConfigError, match=match) as info:
        load_user_file(path)
    assert str(path) in str(info.value)
