import hashlib

import pytest

from workbench.errors import LabSetValidationError, UnknownReferenceSetError, ValueRangeError
from workbench.physics.airvac import air_to_vacuum_nm
from workbench.refdata import import_lab_set, load_set, save_lab_set

# Invented demo lab (Harbourside Conservation Lab); wavelengths are the handbook
# Na D and Cu I lines (NIST ASD, from memory) as a bench spectrometer might read them.
GOOD = (
    b"# Harbourside Conservation Lab, bench LIBS, invented demo data\n"
    b"element,ion,wavelength_nm,medium,rel_intensity,notes,measured_by,instrument\n"
    b"Na,1,588.995,air,1000,D2,R. Okafor,LIBS-2\n"
    b"Na,1,589.592,air,500,D1,R. Okafor,LIBS-2\n"
    b"Cu,1,324.754,air,800,,R. Okafor,LIBS-2\n"
    b"C,1,193.091,vacuum,,,R. Okafor,LIBS-2\n"
)


def test_import_save_and_load(tmp_path):
    rs = import_lab_set(GOOD, "harbourside-libs", "Harbourside bench LIBS", source_name="x.csv")
    t = rs.table
    assert t.height == 4
    assert t["line_id"].str.starts_with("harbourside-libs:").all()
    assert t["wavelength_vac_nm"].is_sorted()
    na = t.filter(t["wavelength_air_nm"].is_between(588.99, 589.0)).row(0, named=True)
    assert na["wavelength_vac_nm"] == pytest.approx(float(air_to_vacuum_nm(588.995)), abs=1e-9)
    assert "measured by R. Okafor" in na["notes"]
    c = t.filter(t["element"] == "C").row(0, named=True)
    assert c["wavelength_air_nm"] is None  # below 200 nm: vacuum only
    lab = tmp_path / "labs"
    manifest = save_lab_set(rs, lab)
    assert manifest.name == "lab_manifest.json"
    assert (lab / "harbourside-libs.csv").read_bytes() == GOOD  # kept byte-for-byte
    loaded = load_set("harbourside-libs", lab_dir=lab)
    assert loaded.sha256 == rs.sha256
    assert loaded.entry["original_csv"]["sha256"] == hashlib.sha256(GOOD).hexdigest()
    assert loaded.table.equals(t)
    with pytest.raises(UnknownReferenceSetError, match="harbourside-libs"):
        load_set("other", lab_dir=lab)


def test_header_medium_and_energy_sets():
    rs = import_lab_set(b"# medium: vacuum\nelement,ion,wavelength_nm\nFe,1,372.0\n", "a", "A")
    assert rs.table["wavelength_vac_nm"][0] == 372.0
    xr = import_lab_set(b"element,ion,energy_eV\nCu,1,8047.8\n", "b", "B")
    assert xr.axis == "energy" and xr.table["wavelength_air_nm"][0] is None


BAD = (
    "element,ion,wavelength_nm,medium,A_ki_per_s\n"
    "Na,1,588.995,air,6.2e7\n"  # line 2 fine
    "Xx,1,500.0,air,\n"  # line 3 bad element
    "Fe,0,400.0,air,\n"  # line 4 ion < 1
    "Fe,1,abc,air,\n"  # line 5 non-numeric
    "Fe,1,nan,air,\n"  # line 6 NaN
    "Fe,1,-3,air,\n"  # line 7 negative
    "Fe,1,404.581,,\n"  # line 8 missing medium
    "Na,1,588.995,air,\n"  # line 9 duplicate of line 2
    "fe,1,371.99,air,-5\n"  # line 10 case and negative A
    "Fe,1,150.0,air,\n"  # line 11 air below 200 nm
)


def test_bad_rows_all_reported_and_nothing_written(tmp_path):
    lab = tmp_path / "labs"
    with pytest.raises(LabSetValidationError) as info:
        rs = import_lab_set(BAD.encode(), "bad", "Bad", source_name="bad.csv")
        save_lab_set(rs, lab)
    problems = info.value.problems
    text = " | ".join(problems)
    for line in (3, 4, 5, 6, 7, 8, 9, 10, 11):
        assert f"line {line}" in text, line
    assert "line 2," not in text and "line 2:" not in text
    assert "did you mean 'Fe'" in text
    assert "duplicate of line 2" in text
    assert "bad.csv" in str(info.value)
    assert not lab.exists()


def test_structural_problems():
    with pytest.raises(LabSetValidationError, match="medium"):
        import_lab_set(b"element,ion,wavelength_nm\nFe,1,372\n", "x", "X")
    with pytest.raises(LabSetValidationError, match="unknown column"):
        import_lab_set(b"element,ion,wavelength_nm,medium,colour\nFe,1,372,air,red\n", "x", "X")
    with pytest.raises(LabSetValidationError, match="exactly one position"):
        import_lab_set(b"element,ion\nFe,1\n", "x", "X")
    with pytest.raises(LabSetValidationError, match="UTF-8"):
        import_lab_set(b"element,ion,energy_eV\n\xff\xfe,1,2\n", "x", "X")
    with pytest.raises(ValueRangeError):
        import_lab_set(GOOD, "Bad Id", "X")
