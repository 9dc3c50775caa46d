"""Store-wide checks: SQLite's page check, the ledger, and the key log against the analysts.

These find what per-case checks cannot: a deleted, inserted or altered row of
any table (the ledger, :mod:`workbench.casefile.ledger`), a damaged page
(``damaged-database``), and a key log (:mod:`workbench.casefile.keylog`) that
is broken or disagrees with the ``analysts`` table (``key-log-broken``,
``key-state-mismatch``).
"""

from __future__ import annotations

import sqlite3

from workbench.casefile import ledger
from workbench.casefile.breaks import Break
from workbench.casefile.keylog import replay_key_log

__all__ = ["has_table", "store_breaks"]


def has_table(conn: sqlite3.Connection, name: str) -> bool:
    """Return whether the database holds a table of this name (older stores lack some)."""
    q = "SELECT 1 FROM sqlite_master WHERE type='table' AND name=?"
    return conn.execute(q, (name,)).fetchone() is not None


def store_breaks(conn: sqlite3.Connection, anchor: tuple[int, str] | None) -> list[Break]:
    """Return the breaks found by the page check, the ledger and the key log over the whole store.

    ``anchor`` is a ledger head ``(seq, hash)`` recorded earlier outside the store.
    """
    import workbench.casefile.schema  # noqa: F401  (registers the store's tables with the ledger)

    out: list[Break] = []
    # Pages that no query reads (an index, a free page) are damaged silently
    # otherwise; SQLite's own check reads every page.
    problems = [r[0] for r in conn.execute("PRAGMA integrity_check(20)").fetchall()]
    if problems != ["ok"]:
        out.append(
            Break(
                "damaged-database",
                None,
                None,
                None,
                None,
                "cases.sqlite",
                "SQLite's integrity check fails: " + "; ".join(map(str, problems[:3])),
            )
        )
    tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    if ledger.LEDGER_TABLE in tables or "key_events" in tables:
        for p in ledger.check_ledger(conn, anchor):
            out.append(
                Break(p.kind, None, None, p.seq, None, p.identity, p.detail, p.expected, p.found)
            )
    if "key_events" not in tables:
        return out
    cur = conn.execute("SELECT * FROM key_events ORDER BY seq")
    names = [d[0] for d in cur.description]
    events = [dict(zip(names, r, strict=True)) for r in cur.fetchall()]
    states, problems = replay_key_log(events)
    for seq, text in problems:
        out.append(Break("key-log-broken", None, None, seq, None, "key log", text))
    cur = conn.execute("SELECT * FROM analysts ORDER BY id")
    names = [d[0] for d in cur.description]
    for row in (dict(zip(names, r, strict=True)) for r in cur.fetchall()):
        fp = row.get("fingerprint")
        what = f"analyst {row.get('name')} key {fp}"
        st = states.pop(fp, None)
        if st is None:
            if not problems:
                out.append(
                    Break(
                        "key-state-mismatch",
                        None,
                        None,
                        None,
                        None,
                        what,
                        "the key has no registration or import event in the key log",
                    )
                )
            continue
        for col, want in st.columns().items():
            if row.get(col) != want:
                out.append(
                    Break(
                        "key-state-mismatch",
                        None,
                        None,
                        st.events[-1] if st.events else None,
                        None,
                        what,
                        f"analysts.{col} differs from what the key log says",
                        None if want is None else str(want),
                        None if row.get(col) is None else str(row.get(col)),
                    )
                )
                break
    if not problems:
        for fp in sorted(states):
            out.append(
                Break(
                    "missing-row",
                    None,
                    None,
                    None,
                    None,
                    f"analyst key {fp}",
                    "the key log names a key that the analysts table does not hold (deleted)",
                )
            )
    return out
