"""The invented demo sheets (LIBS paint chip, XRF white ground) read as a report.

Checked with poppler's pdftotext (an independent reader of the PDF) and
rendered to PNG with pdftoppm into ``test-artifacts/findings/`` (git-ignored)
for a person to look at. All demo data are invented (workbench.demo).
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pytest

from workbench.demo import DEMO_LAB

PASS = "demo-sheet-pass"  # invented
ARTIFACTS = Path(__file__).resolve().parents[2] / "test-artifacts" / "findings"
pytestmark = pytest.mark.skipif(
    shutil.which("pdftotext") is None or shutil.which("pdftoppm") is None,
    reason="poppler-utils (pdftotext, pdftoppm) absent",
)

QUESTIONS = {
    "NRFL-2026-0417": ("Which elements make up the red paint chip?", ["Pb"]),
    "NRFL-2026-0502": ("Does the white ground contain titanium or zinc white pigments?", ["Ti"]),
}


@pytest.fixture(scope="module")
def demo_sheets(tmp_path_factory):
    from workbench import __version__
    from workbench.casefile import CaseStore
    from workbench.demo import seed_demo_case
    from workbench.findings import generate_key_pair, issue_findings_sheet
    from workbench.matching import analyse_input

    root = tmp_path_factory.mktemp("demo")
    kp = generate_key_pair(PASS)
    out, reports = {}, {}
    with CaseStore.open(root / "store") as store:
        seeded = seed_demo_case(store)
        store.register_analyst("Dr Mirela Okafor (invented)", "examiner", kp.public_key_pem)
        for case, mid in seeded["measurements"].items():
            m = store.get_measurement(mid)
            outcome = analyse_input(store.file_bytes(m.sha256), name=m.filename)
            a = store.add_analysis(
                m.id,
                parameters=outcome.report["parameters"],
                reference_sets=outcome.report["reference_sets"],
                result_json=outcome.json_bytes,
                software_version=__version__,
                analyst="Dr Mirela Okafor (invented)",
            )
            question, asked = QUESTIONS[case]
            issued = issue_findings_sheet(
                store,
                a.id,
                analyst_fingerprint=kp.fingerprint,
                private_key_pem=kp.private_key_pem,
                passphrase=PASS,
                lab=DEMO_LAB,
                notes="",
                limitations="",
                issued_at="2026-11-22T10:00:00Z",
                out_dir=root / case,
                question=question,
                elements_asked=asked,
            )
            out[case] = issued
            reports[case] = outcome.report
    return out, reports


def _pages(pdf_path: Path) -> list[str]:
    text = subprocess.run(
        ["pdftotext", "-layout", "-enc", "UTF-8", str(pdf_path), "-"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    return text.split("\f")[:-1]  # pdftotext ends every page with a form feed


@pytest.mark.parametrize(
    ("case", "concluded", "axis_words"),
    [
        # Elements synthesised in the invented LIBS scenario (workbench.demo.SCENARIOS)
        # and called "probable" or better; Ca (H, K and 422.67 nm only) is "possible"
        # since stop 25 (docs/evidence-model.md, section 4).
        ("NRFL-2026-0417", ["Ba", "Cr", "Fe", "Mg", "Si", "Ti"], "nm, air"),
        # Pb, Zn and Ti are the strong lines of the invented XRF scenario.
        ("NRFL-2026-0502", ["Pb", "Ti", "Zn"], "eV"),
    ],
)
def test_demo_sheet_reads_as_a_report(demo_sheets, case, concluded, axis_words):
    issued = demo_sheets[0][case]
    pages = _pages(issued.paths["pdf"])
    assert 1 <= len(pages) <= 4  # issue 12: the demo sheet fits on four pages
    first = pages[0]
    assert "Findings" in first and f"Decisive lines ({axis_words})" in first
    for symbol in concluded:
        assert re.search(rf"^\s*{symbol}\s", first, re.M), symbol  # one summary row each
    assert QUESTIONS[case][0][:40] in re.sub(r"\s+", " ", first)
    everything = "\n".join(pages)
    for token in ("[]", "None", "{", "}"):
        assert token not in everything, token
    assert not re.search(r"\b(true|false)\b", everything)
    # Every page says "page i of n"; no page ends with a heading left alone.
    for i, page in enumerate(pages, start=1):
        assert f"page {i} of {len(pages)}" in page
        body = [ln for ln in page.splitlines() if ln.strip()][:-1]  # drop the footer
        assert body[-1].strip() not in ("Evidence for each element", "Limits", "Cautions")
    # "Not supported" species appear only as a count (appendix).
    assert re.search(r"\d+ further species had candidate lines", everything)
    # e.g. "Rh I" or "Xe L": none of the species the evidence did not support is named.
    unsupported = [
        e["species"] for e in demo_sheets[1][case]["elements"] if e["verdict_level"] == 0
    ]
    assert len(unsupported) > 20
    for species in unsupported:
        assert not re.search(rf"\b{species}\b", everything), species


def test_xrf_wording(demo_sheets):
    text = "\n".join(_pages(demo_sheets[0]["NRFL-2026-0502"].paths["pdf"]))
    assert "Pb L" in text and "Ti K" in text  # family labels
    assert re.search(r"\b10551 eV\b", text)  # Pb L3-M5 to 1 eV (reference set value 10551.0)
    assert "equilibrium" not in text and "Boltzmann" not in text  # no plasma model for X-rays
    assert "keV" not in text


def test_pages_rendered_to_png(demo_sheets):
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    for case, issued in demo_sheets[0].items():
        prefix = ARTIFACTS / case
        subprocess.run(
            ["pdftoppm", "-png", "-r", "80", str(issued.paths["pdf"]), str(prefix)], check=True
        )
        pngs = sorted(ARTIFACTS.glob(f"{case}-*.png"))
        assert pngs and all(p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" for p in pngs)  # PNG sig
