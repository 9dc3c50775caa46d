"""Frozen record types returned by the case store, each with ``to_dict()``.

Also the field lists covered by each record's hash (``*_HASH_FIELDS``): the
natural keys (case number, item number, content hashes) rather than local
database ids, so hashes survive export to another store.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any

__all__ = [
    "ANALYSIS_HASH_FIELDS",
    "CASE_HASH_FIELDS",
    "CASE_STATUSES",
    "FINDINGS_HASH_FIELDS",
    "ITEM_HASH_FIELDS",
    "MEASUREMENT_HASH_FIELDS",
    "TECHNIQUES",
    "AnalysisRecord",
    "AnalystRecord",
    "CaseRecord",
    "CustodyEvent",
    "FindingsSheetRecord",
    "ItemRecord",
    "MeasurementRecord",
    "SearchHit",
]

#: Allowed case statuses.
CASE_STATUSES: tuple[str, ...] = ("open", "closed", "archived")
#: Allowed measurement techniques.
TECHNIQUES: tuple[str, ...] = ("LIBS", "spark OES", "ICP-OES", "XRF", "absorption", "other")

CASE_HASH_FIELDS = ("case_number", "title", "requesting_party", "created_at")
ITEM_HASH_FIELDS = (
    "case_number",
    "case_hash",
    "item_number",
    "description",
    "parent_item_number",
    "seal_numbers",
    "storage_location",
    "created_at",
)
MEASUREMENT_HASH_FIELDS = (
    "case_number",
    "item_number",
    "sha256",
    "filename",
    "size_bytes",
    "technique",
    "instrument",
    "settings",
    "operator",
    "measured_at",
    "recorded_at",
)
ANALYSIS_HASH_FIELDS = (
    "case_number",
    "item_number",
    "measurement_hash",
    "parameters",
    "reference_sets",
    "result_sha256",
    "software_version",
    "analyst",
    "created_at",
)
FINDINGS_HASH_FIELDS = (
    "case_number",
    "item_number",
    "analysis_hash",
    "analyst_fingerprint",
    "analyst",
    "pdf_sha256",
    "json_sha256",
    "signature_sha256",
    "record_sha256",
    "issued_at",
    "recorded_at",
)


class _Record:
    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly dictionary."""
        out: dict[str, Any] = {}
        for f in dataclasses.fields(self):  # type: ignore[arg-type]
            value = getattr(self, f.name)
            if isinstance(value, bytes):
                continue
            out[f.name] = list(value) if isinstance(value, tuple) else value
        return out


@dataclass(frozen=True)
class CaseRecord(_Record):
    """A case."""

    id: int
    case_number: str
    title: str
    requesting_party: str
    status: str
    created_at: str
    record_hash: str


@dataclass(frozen=True)
class ItemRecord(_Record):
    """An item or sub-sample with its current custody state.

    ``holder``, ``seal_state``, ``seals``, ``disposed``, ``event_count`` and
    ``current_location`` (latest location in the chain) are computed from the
    custody chain when the record is read; ``storage_location`` is where it was
    first stored.
    """

    id: int
    case_number: str
    item_number: str
    description: str
    parent_item_number: str | None
    seal_numbers: tuple[str, ...]
    storage_location: str | None
    created_at: str
    record_hash: str
    holder: str | None
    seal_state: str
    seals: tuple[str, ...]
    disposed: bool
    event_count: int
    current_location: str | None = None

    @property
    def label(self) -> str:
        """``"CASE/ITEM"``."""
        return f"{self.case_number}/{self.item_number}"


@dataclass(frozen=True)
class CustodyEvent(_Record):
    """One custody event."""

    id: int
    case_number: str
    item_number: str
    seq: int
    kind: str
    at: str
    actor: str
    from_party: str | None
    to_party: str | None
    location: str | None
    seal_state: str
    seal_number: str | None
    note: str | None
    corrects_seq: int | None
    ref_kind: str | None
    ref_key: str | None
    ref_hash: str | None
    recorded_at: str
    prev_hash: str
    hash: str


@dataclass(frozen=True)
class MeasurementRecord(_Record):
    """A measurement: an original file as received, plus how it was taken."""

    id: int
    case_number: str
    item_number: str
    sha256: str
    filename: str
    size_bytes: int
    technique: str
    instrument: str
    settings: dict[str, Any]
    operator: str
    measured_at: str
    recorded_at: str
    record_hash: str


@dataclass(frozen=True)
class AnalysisRecord(_Record):
    """A stored analysis; ``result_json`` holds the exact bytes given."""

    id: int
    measurement_id: int
    case_number: str
    item_number: str
    measurement_hash: str
    parameters: dict[str, Any]
    reference_sets: list[dict[str, Any]]
    result_json: bytes
    result_sha256: str
    software_version: str
    analyst: str
    created_at: str
    record_hash: str


@dataclass(frozen=True)
class FindingsSheetRecord(_Record):
    """An issued findings sheet (files stored content-addressed)."""

    id: int
    analysis_id: int
    case_number: str
    item_number: str
    analysis_hash: str
    analyst_fingerprint: str
    analyst: str
    pdf_sha256: str
    json_sha256: str
    signature_sha256: str
    record_sha256: str
    issued_at: str
    recorded_at: str
    record_hash: str


@dataclass(frozen=True)
class AnalystRecord(_Record):
    """A registered analyst and public key, with where the key came from.

    ``provenance`` is ``local`` (registered here), ``imported`` (arrived in a
    case bundle) or ``legacy`` (found when the store was upgraded); only a
    ``trusted`` key signs in this store or verifies sheets against it.
    """

    id: int
    name: str
    role: str
    public_key_pem: str
    fingerprint: str
    status: str
    registered_at: str
    revoked_at: str | None
    revoked_reason: str | None
    revoked_by: str | None
    provenance: str = "local"
    registered_by: str | None = None
    trusted: bool = True
    trusted_by: str | None = None
    trusted_at: str | None = None
    trust_reason: str | None = None

    @property
    def provenance_text(self) -> str:
        """Provenance in words: ``local``, ``imported, untrusted``, ``imported, trusted by X``."""
        if self.provenance == "local":
            return "local"
        if not self.trusted:
            return f"{self.provenance}, untrusted"
        return f"{self.provenance}, trusted by {self.trusted_by} at {self.trusted_at}"

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly dictionary (with ``provenance_text``)."""
        out = super().to_dict()
        out["provenance_text"] = self.provenance_text
        return out


@dataclass(frozen=True)
class SearchHit(_Record):
    """One case found by :meth:`CaseStore.search_cases`."""

    case_number: str
    title: str
    score: float
    field: str
    matched_text: str
