import shutil

import pytest

from workbench.compare.materials import (
    MATERIALS_CAUTIONS,
    candidate_materials,
    load_materials,
    materials_dir,
)
from workbench.errors import DataIntegrityError, ManifestError


@pytest.fixture(scope="module")
def table():
    return {m.id: m for m in load_materials()}


REQUIRED = [
    "lead_white", "vermilion", "chrome_yellow", "titanium_white_anatase", "titanium_white_rutile",
    "zinc_white", "cadmium_yellow", "cobalt_blue", "prussian_blue", "smalt", "ultramarine_natural",
    "ultramarine_synthetic", "emerald_green", "lead_tin_yellow_I", "lead_tin_yellow_II",
    "egyptian_blue", "azurite", "malachite", "orpiment", "red_lead", "red_ochre", "yellow_ochre",
    "bone_black", "barium_white",
]  # fmt: skip


def test_table_has_required_rows_and_says_from_memory(table):
    assert set(REQUIRED) <= set(table)  # list from the brief
    assert all("from memory" in m.source_note for m in table.values())


@pytest.mark.parametrize(
    ("mid", "key"),
    [
        ("vermilion", {"Hg", "S"}),  # HgS (Artists' Pigments; from memory)
        ("lead_white", {"Pb"}),  # basic lead carbonate (from memory)
        ("smalt", {"Co", "K", "Si"}),  # cobalt potash glass (from memory)
        ("egyptian_blue", {"Cu", "Ca", "Si"}),  # CaCuSi4O10 (from memory)
        ("emerald_green", {"Cu", "As"}),  # copper acetoarsenite (from memory)
        ("lithopone", {"Zn", "Ba", "S"}),  # ZnS + BaSO4 (from memory)
    ],
)
def test_key_elements(table, mid, key):
    assert set(table[mid].key_elements) == key


def test_smalt_associated_arsenic(table):
    assert "As" in table["smalt"].associated_elements  # As common in smalt (from memory)


@pytest.mark.parametrize(
    ("mid", "year"),
    [
        ("prussian_blue", 1704),  # Berlin 1704-1706 (from memory)
        ("cobalt_blue", 1802),  # Thénard (from memory)
        ("emerald_green", 1814),  # Schweinfurt (from memory)
        ("scheeles_green", 1775),  # Scheele (from memory)
        ("zinc_white", 1834),  # W&N Chinese white (from memory)
        ("lithopone", 1874),  # Orr's patent (from memory)
        ("titanium_white_anatase", 1916),  # 1916-1921 (from memory)
    ],
)
def test_dates(table, mid, year):
    assert table[mid].first_available_year == year


def test_titanium_white_on_1850_work_is_flagged():
    rep = candidate_materials({"Ti", "Pb"}, claimed_year=1850)
    flagged = {c["id"] for c in rep.candidates if c["anachronism"]}
    assert flagged == {"titanium_white_anatase", "titanium_white_rutile"}  # 1916/1937 > 1850
    assert any("claimed to date from 1850" in a for a in rep.anachronisms)
    assert rep.cautions == MATERIALS_CAUTIONS


def test_lead_white_on_1650_work_is_not_flagged():
    rep = candidate_materials({"Pb"}, claimed_year=1650)
    lw = next(c for c in rep.candidates if c["id"] == "lead_white")
    assert lw["anachronism"] is False  # antiquity < 1650


def test_light_elements_optional_and_specific_first():
    rep = candidate_materials({"Hg"})
    assert [c["id"] for c in rep.candidates] == ["vermilion"]
    assert rep.candidates[0]["key_elements_not_detected"] == ["S"]
    rep = candidate_materials({"Cu", "As"})
    ids = [c["id"] for c in rep.candidates]
    assert ids[:2] == ["emerald_green", "scheeles_green"]  # two key elements beat one (Cu only)
    assert "lithopone" not in [c["id"] for c in candidate_materials({"Zn"}).candidates]


def test_engine_result_and_unexplained():
    levels = {"Zn": 3, "Ba": 2, "W": 2, "Ti": 1}  # Ti below level 2: not present
    engine = {"elements": [{"element": e, "verdict_level": v} for e, v in levels.items()]}
    rep = candidate_materials(engine)
    assert rep.present_elements == ("Ba", "W", "Zn")
    assert rep.candidates[0]["id"] == "lithopone"  # Zn and Ba both key
    assert rep.unexplained_elements == ("W",)
    assert rep.to_json() == candidate_materials(engine).to_json()


def test_tampered_table_refused(tmp_path):
    shutil.copy(materials_dir() / "manifest.json", tmp_path / "manifest.json")
    data = (materials_dir() / "pigments.csv").read_bytes().replace(b"1704", b"1604")
    (tmp_path / "pigments.csv").write_bytes(data)
    with pytest.raises(DataIntegrityError, match="SHA-256"):
        load_materials(tmp_path / "pigments.csv")
    (tmp_path / "manifest.json").unlink()
    with pytest.raises(ManifestError):
        load_materials(tmp_path / "pigments.csv")
