"""Fixtures for the app tests: an invented case store seeded through the library API."""

from __future__ import annotations

from pathlib import Path

import pytest

APP_DIR = Path(__file__).resolve().parents[2] / "workbench" / "app"
MAIN = str(APP_DIR / "main.py")

# Invented peak list (invented data; the positions are real air wavelengths of the
# Na I D lines 588.995/589.592 nm and Cu I 324.754/327.396/510.554/515.324/521.820 nm,
# NIST ASD, from memory) so that the shipped optical set gives clear calls.
PEAKS_CSV = (
    b"wavelength_nm,intensity\n"
    b"324.754,1000\n327.396,600\n510.554,80\n515.324,150\n521.820,200\n"
    b"588.995,900\n589.592,500\n"
)

CASE = "TEST-2026-0001"
ANALYST = "Ada Example (invented)"


def seed(root: Path) -> dict:
    from workbench.casefile.store import CaseStore

    with CaseStore.open(root) as store:
        store.create_case(CASE, "Brass shavings, invented test case", "Invented Police Unit")
        store.add_item(
            CASE, "1", "Envelope with metal shavings (invented)", seal_numbers=["S-100"],
            received_by=ANALYST, received_from="Courier Bo (invented)",
            at="2026-11-01T09:00:00Z",
        )  # fmt: skip
        # custody rule 'sealed-sub-sample' (issue 11 item 8): the seal is broken on record first
        store.add_custody_event(
            (CASE, "1"), "opened", ANALYST, seal_number="S-100", at="2026-11-01T09:30:00Z"
        )
        store.add_item(
            CASE, "1a", "Shaving taken from item 1 (invented)", parent_item="1",
            received_by=ANALYST, at="2026-11-01T10:00:00Z",
        )  # fmt: skip
        m = store.add_measurement(
            (CASE, "1a"), PEAKS_CSV, "shaving_peaks.csv", "LIBS", "Bench LIBS (invented)",
            {"pulse_energy_mJ": 20}, ANALYST, "2026-11-02T08:00:00Z",
        )  # fmt: skip
    return {"measurement_id": m.id}


@pytest.fixture
def store_root(tmp_path, monkeypatch) -> Path:
    root = tmp_path / "store"
    seed(root)
    monkeypatch.setenv("WORKBENCH_STORE", str(root))
    return root


@pytest.fixture
def app(store_root):
    from streamlit.testing.v1 import AppTest

    at = AppTest.from_file(MAIN, default_timeout=120)
    at.run()
    assert not at.exception, at.exception
    return at
