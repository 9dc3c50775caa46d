"""XRF wording helpers (pure functions; expected strings derived by hand)."""

from __future__ import annotations

import pytest

from workbench.xray.wording import (
    artefact_kind_label,
    artefact_lines,
    family_label,
    format_energy_eV,
    instrument_line,
    overlap_text,
    xrf_message,
)


@pytest.mark.parametrize(
    ("value", "text"),
    [(10551.2, "10551 eV"), (4466.5, "4467 eV"), (None, "–"), (float("nan"), "–")],
)
def test_format_energy(value, text):
    assert format_energy_eV(value) == text


def test_family_label():
    assert family_label("Pb", "L") == "Pb L"
    assert family_label("Ti", None) == "Ti"


@pytest.mark.parametrize(("sep", "state"), [(45.7, "unresolved"), (300.0, "resolved")])
def test_overlap_in_ev_of_resolution(sep, state):
    assert overlap_text(sep, 125.0).startswith(f"{sep:.0f} eV apart; {state} at this detector")


def test_engine_message_rewritten():
    msg = (
        "observed line at 4501.1596 eV: Ba L 4466.5000 and Ti K 4512.2000 eV are within the "
        "match window (separation 45.7000 eV; separating them needs R ≥ 98). Settle with "
        "other lines — Ba L: found clean 5154.4000, 5531.4000 eV."
    )
    out = xrf_message(msg, lambda e: 125.0)
    assert "R ≥" not in out
    assert "Ba L 4467 and Ti K 4512 eV" in out
    assert "46 eV apart; unresolved at this detector, whose FWHM is 125 eV here" in out
    assert "found clean 5154, 5531 eV" in out


def test_instrument_and_artefact_lines():
    xray = {
        "instrument": {
            "anode": "Rh",
            "tube_kV": 40.0,
            "detector": "Si",
            "fwhm_MnKa_eV": 140.0,
            "atmosphere": "air",
        },
        "instrument_assumed": True,
        "artefact_peaks": [
            {
                "observed_eV": 8811.4,
                "kinds": "escape",
                "origin": "Si Kα escape of the 10551 eV peak",
                "explained": True,
            }
        ],
    }
    assert instrument_line(xray) == (
        "instrument Rh tube 40 kV, Si detector 140 eV at Mn Kα, air path (assumed default)"
    )
    lines = artefact_lines(xray)
    assert lines[1].strip() == "8811 eV  Si Kα escape of the 10551 eV peak"


def test_artefact_kind_label():
    assert artefact_kind_label("compton,sum") == "tube scatter (Compton), sum (pile-up) peak"
