"""Case-file store with chain of custody, content-addressed files and bundles.

:class:`CaseStore` keeps cases, items and sub-samples, measurements (original
files stored byte-for-byte under their SHA-256), analyses, findings sheets and
analysts in one SQLite database with an append-only, hash-chained custody log
per item (rules in :mod:`workbench.casefile.custody`). :func:`verify_store`
(also ``CaseStore.verify``) re-derives every hash and reports the first break
exactly; the store ledger (:mod:`~workbench.casefile.ledger`) chains every row
of every table so that deleted records are reported too, and the key log
(:mod:`~workbench.casefile.keylog`) records every registration, import, trust
and revocation of an analyst's key. :func:`export_bundle` /
:func:`import_bundle` move a case between stores as one deterministic, fully
verified zip; keys it carries arrive untrusted.
"""

from __future__ import annotations

from workbench.casefile.blobs import BlobStore
from workbench.casefile.bundle import ImportResult, export_bundle, import_bundle
from workbench.casefile.custody import (
    EVENT_KINDS,
    SEAL_STATES,
    ChainState,
    apply_event,
    event_hash,
)
from workbench.casefile.hashing import (
    GENESIS_HASH,
    canonical_json,
    normalise_time,
    sha256_hex,
    utc_now,
)
from workbench.casefile.records import (
    CASE_STATUSES,
    TECHNIQUES,
    AnalysisRecord,
    AnalystRecord,
    CaseRecord,
    CustodyEvent,
    FindingsSheetRecord,
    ItemRecord,
    MeasurementRecord,
    SearchHit,
)
from workbench.casefile.schema import SCHEMA_VERSION
from workbench.casefile.store import STORE_ENV, CaseStore, resolve_store_root
from workbench.casefile.verify import Break, VerifyReport, verify_store

__all__ = [
    "CASE_STATUSES",
    "EVENT_KINDS",
    "GENESIS_HASH",
    "SCHEMA_VERSION",
    "SEAL_STATES",
    "STORE_ENV",
    "TECHNIQUES",
    "AnalysisRecord",
    "AnalystRecord",
    "BlobStore",
    "Break",
    "CaseRecord",
    "CaseStore",
    "ChainState",
    "CustodyEvent",
    "FindingsSheetRecord",
    "ImportResult",
    "ItemRecord",
    "MeasurementRecord",
    "SearchHit",
    "VerifyReport",
    "apply_event",
    "canonical_json",
    "event_hash",
    "export_bundle",
    "import_bundle",
    "normalise_time",
    "resolve_store_root",
    "sha256_hex",
    "utc_now",
    "verify_store",
]
