"""A calibration-lamp line list typed from memory (Hg I and Ar I, air wavelengths).

The wavelengths are well-known Hg-Ar pen-lamp lines (handbook values, from
memory); the intensities are rough. A real lamp list is the kind of input the
engine will meet: a few lines per element, sources with and without A-values,
and strong lines that were left out (Ar I 840.82 nm is not in the list).
"""

from pathlib import Path

from workbench.matching import MatchParameters, ToleranceSpec, analyse_input

DATA = Path(__file__).resolve().parents[1] / "data" / "matching" / "hg_ar_lamp_from_memory.csv"


def test_hg_ar_lamp():
    params = MatchParameters(tolerance=ToleranceSpec("fixed", 0.05))
    rep = analyse_input(DATA, params=params).report
    levels = {el["species"]: el for el in rep["elements"]}
    assert levels["Hg I"]["verdict"] == "established"
    assert levels["Ar I"]["verdict_level"] >= 2
    # Ar I 840.821 nm (a strong Ar I line, from memory) was left out of the list on
    # purpose: the engine must name it as missing.
    missing = [round(m["reference_nm"], 2) for m in levels["Ar I"]["missing_lines"]]
    assert 840.82 in missing
    top = {el["element"] for el in rep["elements"] if el["verdict_level"] == 3}
    assert top <= {"Hg", "Ar"}
    # The Hg I 763.52 / Ar I 763.51 nm coincidence is flagged.
    assert any(
        set(w["elements"]) == {"Ar I", "Hg I"}
        for w in rep["warnings"]
        if w["kind"] == "unresolved_overlap"
    )
