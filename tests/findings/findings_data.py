"""Shared data for the findings tests: an invented case and matching result.

Every name, lab, case and number below is invented for testing (demo data);
line positions are rounded textbook-style values used only as realistic-looking
input, not as check values.
"""

from __future__ import annotations

import copy
import json
from pathlib import Path
from typing import Any

# Invented engine result in the schema_version 1 shape described by the lead.
RESULT: dict[str, Any] = {
    "schema_version": 1,
    "software_version": "0.1.0",
    "input": {
        "name": "item-3_swab_LIBS.csv",
        "sha256": "ab" * 32,
        "kind": "peak_list",
        "unit": "nm",
        "medium": "air",
    },
    "parameters": {"tolerance_nm": 0.05, "min_score": 0.5, "medium": "air"},
    "reference_sets": [{"id": "demo-libs", "version": "2026.1", "sha256": "cd" * 32}],
    "calibration": {"shift_nm": 0.0012},
    "temperature": None,
    "elements": [
        {
            "element": "Pb",
            "ion": 1,
            "verdict": "present",
            "verdict_level": 3,
            "score": 0.9312345678901,
            "matched_lines": [
                {
                    "observed_nm": 405.7821,
                    "reference_nm": 405.7807,
                    "delta_nm": 0.0014,
                    "expected_rel": 1.0,
                    "observed_rel": 1.0,
                    "line_id": "Pb I 405.78",
                },
                {
                    "observed_nm": 368.3480,
                    "reference_nm": 368.3462,
                    "delta_nm": 0.0018,
                    "expected_rel": 0.45,
                    "observed_rel": 0.39,
                    "line_id": "Pb I 368.35",
                },
            ],
            "missing_lines": [{"reference_nm": 283.3053, "expected_rel": 0.3, "line_id": "x"}],
            "shared_lines": [],
        },
        {
            "element": "Ba",
            "ion": 2,
            "verdict": "possible",
            "verdict_level": 2,
            "score": 0.61,
            "matched_lines": [
                {
                    "observed_nm": 455.4050,
                    "reference_nm": 455.4033,
                    "delta_nm": 0.0017,
                    "expected_rel": 1.0,
                    "observed_rel": 0.8,
                    "line_id": "Ba II 455.40",
                }
            ],
            "missing_lines": [],
            "shared_lines": [],
            "extra_key_from_future": {"ignored": True},
        },
    ],
    "lines": [
        {
            "index": 0,
            "position": 368.3480,
            "intensity": 390.0,
            "assigned_to": "Pb I",
            "candidates": [],
        },
        {
            "index": 1,
            "position": 405.7821,
            "intensity": 1000.0,
            "assigned_to": "Pb I",
            "candidates": [],
        },
        {
            "index": 2,
            "position": 455.4050,
            "intensity": 800.0,
            "assigned_to": "Ba II",
            "candidates": [],
        },
        {
            "index": 3,
            "position": 500.1000,
            "intensity": 50.0,
            "assigned_to": None,
            "candidates": [],
        },
    ],
    "warnings": [
        {
            "kind": "interference",
            "message": "Ba II 455.40 lies within tolerance of a weak Ti line",
            "elements": ["Ba", "Ti"],
            "lines": [2],
        }
    ],
}

FINGERPRINT = "SHA256:" + "0f" * 32  # invented


def make_content_kwargs(**overrides: Any) -> dict[str, Any]:
    kwargs: dict[str, Any] = {
        "lab": {"name": "Harbourside Forensic Chemistry Unit", "address": "1 Quay Lane, Portwick"},
        "case": {"reference": "HFC-2026-0042", "title": "Warehouse fire, Dock 7"},
        "item": {"reference": "HFC-2026-0042/3", "description": "swab from door handle"},
        "custody": [
            {"at": "2026-03-01T10:00:00Z", "event": "received", "actor": "Zoë Ångström"},
            {
                "at": "2026-03-02T08:30:00Z",
                "event": "transferred",
                "actor": "Bjørn Łukasz",
                "location": "LIBS room",
            },
        ],
        "measurement": {
            "technique": "LIBS",
            "instrument": "Bench LIBS #2",
            "settings": {"gate_delay_us": 1.0, "pulses": 50},
        },
        "analysis": {
            "id": "A-17",
            "parameters": RESULT["parameters"],
            "reference_sets": RESULT["reference_sets"],
            "result": copy.deepcopy(RESULT),
        },
        "analyst": {"name": "Zoë Ångström", "role": "examiner", "fingerprint": FINGERPRINT},
        "notes": "Spectrum taken at λ 250–600 nm; see **bench log** <b>p. 4</b> {nb} {x}.",
        "limitations": "Single spot; no replicate.",
        "issued_at": "2026-03-14T09:30:00Z",
    }
    kwargs.update(overrides)
    return kwargs


def make_store(root: Path, public_keys: dict[str, bytes]) -> Any:
    """Open a new case store holding the invented case, one analysis and the given analysts."""
    from workbench.casefile import CaseStore

    st = CaseStore.open(root)
    st.create_case(
        "HFC-2026-0042",
        "Warehouse fire, Dock 7",
        "Portwick Police (invented)",
        created_at="2026-03-01T09:00:00Z",
    )
    st.add_item(
        "HFC-2026-0042",
        "3",
        "swab from door handle",
        seal_numbers=["S-881"],
        received_by="Zoë Ångström",
        received_from="DC Bjørn Łukasz",
        at="2026-03-01T10:00:00Z",
    )
    m = st.add_measurement(
        "HFC-2026-0042/3",
        b"wavelength_nm,intensity\n405.78,1000\n",
        "item-3_swab_LIBS.csv",
        "LIBS",
        "Bench LIBS #2",
        {"gate_delay_us": 1.0},
        "Zoë Ångström",
        "2026-03-02T09:00:00Z",
    )
    st.add_analysis(
        m.id,
        parameters=RESULT["parameters"],
        reference_sets=RESULT["reference_sets"],
        result_json=json.dumps(RESULT).encode(),
        software_version="0.1.0",
        analyst="Zoë Ångström",
    )
    for name, pem in public_keys.items():
        st.register_analyst(name, "examiner", pem)
    return st


def issue_sheet(store: Any, analysis_id: int, key: Any, passphrase: str, out_dir: Path) -> Any:
    """Issue the invented case's sheet for ``analysis_id``, signed with ``key`` (a KeyPair)."""
    from workbench.findings import issue_findings_sheet

    return issue_findings_sheet(
        store,
        analysis_id,
        analyst_fingerprint=key.fingerprint,
        private_key_pem=key.private_key_pem,
        passphrase=passphrase,
        lab={"name": "Harbourside Forensic Chemistry Unit (invented)"},
        notes="",
        limitations="",
        issued_at="2026-03-14T09:30:00Z",
        out_dir=out_dir,
    )
