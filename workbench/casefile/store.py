"""The case store: cases, items, custody, measurements, analyses, findings sheets.

One SQLite database (``cases.sqlite``) and a content-addressed ``files/``
folder under a store directory chosen, in priority, by an explicit path, the
``WORKBENCH_STORE`` environment variable, or ``<repo>/casefiles/``.

Every write that reads a custody chain's head runs in one ``BEGIN IMMEDIATE``
transaction (so two processes cannot both extend the same head), retried
with bounded, jittered backoff while another writer holds the lock. Files
are written (temp, fsync, rename) *before* the row that names them is
committed: a crash leaves at worst an unreferenced file, never a row without
its file.

:class:`CaseStore` is built up one concept per module, each layer on the one
below it: :mod:`~workbench.casefile.storebase` (location, opening,
transactions, ledger entry), :mod:`~workbench.casefile.cases`,
:mod:`~workbench.casefile.chains` (item references and custody chains),
:mod:`~workbench.casefile.items`, :mod:`~workbench.casefile.measurements`,
:mod:`~workbench.casefile.analyses`, :mod:`~workbench.casefile.sheets`
(findings sheets). This module adds the analysts' keys (delegated to
:mod:`~workbench.casefile.analysts`) and verification, and re-exports the
names callers import from here.

Items are named by an *item reference*: an :class:`ItemRecord`, a row id
(``int``), a ``(case_number, item_number)`` tuple, or the text
``"CASE/ITEM"`` (split at the last ``/``; item numbers cannot contain ``/``).
"""

from __future__ import annotations

from typing import Any

from workbench.casefile.chains import ItemRef
from workbench.casefile.records import AnalystRecord
from workbench.casefile.sheets import FindingsSheets
from workbench.casefile.storebase import DB_NAME, FILES_DIR, STORE_ENV, resolve_store_root

__all__ = ["DB_NAME", "FILES_DIR", "STORE_ENV", "CaseStore", "ItemRef", "resolve_store_root"]


class CaseStore(FindingsSheets):
    """An open case store (use :meth:`open`; a context manager).

    Parameters
    ----------
    root : Path
        Store directory (holds ``cases.sqlite`` and ``files/``).
    conn : sqlite3.Connection
        Open connection from :func:`workbench.casefile.schema.connect`.
    """

    # ----------------------------------------------------------------- analysts
    def register_analyst(
        self,
        name: str,
        role: str,
        public_key_pem: bytes | str,
        *,
        registered_by: str = "local registration",
    ) -> AnalystRecord:
        """Register an analyst's Ed25519 public key locally (trusted; see :mod:`.analysts`)."""
        from workbench.casefile.analysts import register_analyst

        return register_analyst(self, name, role, public_key_pem, registered_by=registered_by)

    def get_analyst(self, fingerprint_or_name: str) -> AnalystRecord:
        """Return an analyst by fingerprint, or by name (the active key, else the latest)."""
        from workbench.casefile.analysts import get_analyst

        return get_analyst(self, fingerprint_or_name)

    def list_analysts(self) -> list[AnalystRecord]:
        """Return all registered analysts with their provenance and trust."""
        rows = self._conn.execute("SELECT fingerprint FROM analysts ORDER BY id").fetchall()
        return [self.get_analyst(r[0]) for r in rows]

    def revoke_analyst(self, fingerprint: str, reason: str, actor: str) -> AnalystRecord:
        """Revoke an analyst's key (once; recorded in the key log; the record is kept)."""
        from workbench.casefile.analysts import revoke_analyst

        return revoke_analyst(self, fingerprint, reason, actor)

    def trust_analyst(self, fingerprint: str, by: str, reason: str) -> AnalystRecord:
        """Record a local administrator's trust in an imported or legacy key (once)."""
        from workbench.casefile.analysts import trust_analyst

        return trust_analyst(self, fingerprint, by, reason)

    def key_events(self, fingerprint: str | None = None) -> list[dict[str, Any]]:
        """Return the key log (of one key, or all), oldest first."""
        from workbench.casefile.analysts import key_log

        return key_log(self, fingerprint)

    # ------------------------------------------------------------------- verify
    def verify(
        self, case_number: str | None = None, *, anchor: tuple[int, str] | None = None
    ) -> Any:
        """Check every chain, record, file, signature and the ledger (reads only).

        See :mod:`~workbench.casefile.verify`; ``anchor`` is a ledger head
        ``(seq, hash)`` recorded earlier outside the store.

        Returns
        -------
        VerifyReport
            ``ok`` is False when anything is broken; ``first_break`` says where.
        """
        from workbench.casefile.verify import verify_store

        return verify_store(self, case_number, anchor=anchor)
