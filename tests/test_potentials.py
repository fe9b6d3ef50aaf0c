"""Tests of fescan.potentials: the packaged default table and the user TOML overrides.

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
from fescan.transfer.potentials import (
    POTENTIAL_RANGE_V,
    STATUSES,
    Potential,
    UserParameters,
    assign_potentials,
    default_potential,
    load_user_parameters,
    potential_table,
    reorganisation_overrides,
)

REQUIRED_CLASSES = (
    "[2Fe-2S]",
    "Rieske [2Fe-2S]",
    "[3Fe-4S]",
    "linear [3Fe-4S]",
    "[4Fe-4S]",
    "[4Fe-3S]",
    "Fe(Cys)4",
    "mononuclear Fe",
    "FMN",
    "FAD",
    "riboflavin",
    "flavin",
    "ubiquinone",
    "menaquinone",
    "plastoquinone",
    "quinone",
    "heme b",
    "heme c",
    "heme a",
    "heme o",
    "heme d",
    "siroheme",
    "heme",
    "Cu",
    "CuA",
)
COLUMNS = [
    "class",
    "category",
    "e_mid_v",
    "e_low_v",
    "e_high_v",
    "n_electrons",
    "source",
    "status",
    "couple",
]


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
    header = next(csv.reader(text.splitlines()))
    assert header == COLUMNS


def test_required_classes_and_category_fallbacks():
    rows = potential_table()
    classes = [r.cls for r in rows if r.cls != "*"]
    assert sorted(classes) == sorted(REQUIRED_CLASSES)
    fallbacks = sorted(r.category for r in rows if r.cls == "*")
    assert fallbacks == sorted(CATEGORIES)
    assert all(r.category in CATEGORIES for r in rows)


@pytest.mark.parametrize("row", potential_table(), ids=lambda r: f"{r.cls}|{r.category}")
def test_every_row_has_source_status_and_consistent_range(row):
    assert row.source.strip()
    assert row.status in STATUSES
    assert row.couple.strip()
    assert row.e_low_v <= row.e_mid_v <= row.e_high_v
    assert POTENTIAL_RANGE_V[0] <= row.e_low_v and row.e_high_v <= POTENTIAL_RANGE_V[1]
    assert row.n_electrons in (1, 2)
    if row.status == "MEMORY":
        assert "from memory" in row.source
    if "midpoint of the range" in row.source and row.status != "MEMORY":
        assert row.e_mid_v == pytest.approx((row.e_low_v + row.e_high_v) / 2, abs=1e-3)


@pytest.mark.parametrize(
    ("cls", "expected"),
    [
        ("FMN", -0.219),  # REFERENCES.md §3: free FMN/FMNH2, eQuilibrator redox.tsv (CRC 2010)
        ("FAD", -0.219),  # REFERENCES.md §3: free FAD/FADH2, eQuilibrator redox.tsv (CRC 2010)
        ("menaquinone", -0.074),  # REFERENCES.md §3: eQuilibrator redox.tsv (Thauer 1977)
        ("ubiquinone", 0.045),  # REFERENCES.md §3: textbook table (grokipedia)
        ("plastoquinone", 0.0),  # REFERENCES.md §3: Blankenship 2014 Table A1.2
        ("[2Fe-2S]", -0.43),  # REFERENCES.md §3: plant-type ferredoxin (Falkowski & Raven 2007)
        ("Rieske [2Fe-2S]", 0.125),  # REFERENCES.md §3: middle of -0.15..+0.40 (Brown 2008)
        ("heme c", 0.254),  # REFERENCES.md §3: cytochrome c (grokipedia table)
        ("heme a", 0.29),  # REFERENCES.md §3: cytochrome a (aw-bc Mathews page)
    ],
)
def test_found_values(cls, expected):
    assert default_potential(cls, "unused").e_v == pytest.approx(expected, abs=1e-9)


def test_4fe4s_default_is_ferredoxin_couple_not_hipip():
    # REFERENCES.md §3: bacterial [4Fe-4S] ferredoxin (2+/1+) -0.3 to -0.7 V (Wikipedia mirror);
    # HiPIP (3+/2+) +0.1 to +0.4 V is a different couple.
    pot = default_potential("[4Fe-4S]", "iron-sulfur")
    assert -0.7 <= pot.e_v <= -0.3
    assert pot.couple == "[4Fe-4S] 2+/1+"
    assert "HiPIP" in pot.source


def test_default_potential_class_then_category_then_error():
    pot = default_potential("[4Fe-4S]", "iron-sulfur")
    assert isinstance(pot, Potential)
    assert pot.origin == "default"
    assert pot.status in STATUSES
    fallback = default_potential("[8Fe-7S]", "iron-sulfur")
    assert "fallback" in fallback.source
    assert default_potential("NiFe", "metal").origin == "default"
    with pytest.raises(ConfigError, match="no default midpoint potential"):
        default_potential("mystery", "no-such-category")
    with pytest.raises(ConfigError):
        default_potential("*", "no-such-category")


def test_every_ccd_table_class_has_a_default():
    # Cross-check with the CCD code table of fescan.cofactors (skipped while it is absent).
    path = resources.files("fescan").joinpath("data").joinpath("ccd_cofactors.csv")
    if not path.is_file():
        pytest.skip("fescan/data/ccd_cofactors.csv not present")
    for rec in csv.DictReader(path.read_text("utf-8").splitlines()):
        if rec["category"] == "not analysed":  # listed only to be reported as skipped
            continue
        if rec["category"] == "pterin":  # never a cofactor alone: part of its Mo/W site (category metal)
            continue
        assert default_potential(rec["class"], rec["category"]).source


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
    assert pots["1:A/1:FMN"].e_v == pytest.approx(-0.219)
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


def test_unclassified_cofactor_needs_user_value(tmp_path):
    odd = make_cofactor("C", 7, "", "mystery", "no-such-category", None)
    with pytest.raises(ConfigError, match="user parameter file"):
        assign_potentials([odd])
    pots = assign_potentials([odd], write(tmp_path, '[cofactor."C/7"]\npotential = 0.2\n'))
    assert pots["1:C/7:-"].e_v == pytest.approx(0.2)
    assert pots["1:C/7:-"].couple == ""
