"""Re-deriving one item's custody chain: sequence, links, event hashes, rules.

:func:`check_chain` walks an item's events in order and reports the first
break: a gap (``missing-event``), a ``prev_hash`` that is not the previous
event's hash (``broken-link``, or ``reordered`` when it points at another
event of the chain), an event whose content no longer matches its hash
(``altered-event``), a custody rule broken on replay (``rule-violation``), or
a first event that does not name the item's record (``unchained-record``). A
sub-sample's chain must start from its parent's ``sub-sampled`` event.
"""

from __future__ import annotations

from typing import Any

from workbench.casefile.breaks import Break, record_hash
from workbench.casefile.casedata import CaseData
from workbench.casefile.custody import EVENT_FIELDS, ChainState, apply_event
from workbench.casefile.hashing import GENESIS_HASH
from workbench.errors import CustodyRuleError

__all__ = ["check_chain"]


def check_chain(
    data: CaseData, item: dict[str, Any], out: list[Break], parent_events: dict[str, dict]
) -> int:
    """Check one item's chain, appending breaks to ``out``; return the number of events.

    ``parent_events`` maps a sub-sample's item number to its parent's ``sub-sampled`` event.
    """
    cn = data.case["case_number"]
    num = item["item_number"]
    label = f"{cn}/{num}"
    events = data.events.get(num, [])

    def brk(
        kind: str,
        ev: dict | None,
        detail: str,
        exp: Any = None,
        found: Any = None,
        seq: int | None = None,
    ) -> None:
        out.append(
            Break(
                kind,
                cn,
                num,
                seq if seq is not None else (ev or {}).get("seq"),
                (ev or {}).get("id"),
                None,
                detail,
                None if exp is None else str(exp),
                None if found is None else str(found),
            )
        )

    if not events:
        brk("missing-event", None, "the item has no custody events", "event #1", "none", seq=1)
        return 0
    prev = GENESIS_HASH
    parent_ev = None
    if item.get("parent_item_number"):
        parent_ev = parent_events.get(num)
        if parent_ev is None:
            brk(
                "broken-link",
                events[0],
                f"parent item {item['parent_item_number']} has no 'sub-sampled' event for it",
            )
            return len(events)
        prev = parent_ev["hash"]
    by_hash = {e["hash"]: e for e in events}
    state: ChainState | None = None
    for position, ev in enumerate(events, start=1):
        if ev["seq"] != position:
            if ev["seq"] > position:
                brk(
                    "missing-event",
                    ev,
                    f"event #{position} is missing: #{ev['seq']} follows #{position - 1}",
                    f"#{position}",
                    f"#{ev['seq']}",
                    seq=position,
                )
            else:
                brk("reordered", ev, "sequence number repeats", f"#{position}", f"#{ev['seq']}")
            return len(events)
        if ev["prev_hash"] != prev:
            other = by_hash.get(ev["prev_hash"])
            if other is not None and other is not ev:
                brk(
                    "reordered",
                    ev,
                    f"event #{position} links to event stored as #{other['seq']}, not to "
                    f"#{position - 1}: events were reordered",
                    prev,
                    ev["prev_hash"],
                )
            else:
                brk(
                    "broken-link",
                    ev,
                    "prev_hash is not the hash of the previous event (an earlier event was "
                    "altered, replaced or removed)",
                    prev,
                    ev["prev_hash"],
                )
            return len(events)
        recomputed = record_hash(ev, EVENT_FIELDS)
        if recomputed != ev["hash"]:
            brk(
                "altered-event",
                ev,
                "the event's content does not match its stored hash",
                ev["hash"],
                recomputed,
            )
            return len(events)
        try:
            state = apply_event(state, ev, label)
        except CustodyRuleError as exc:
            brk("rule-violation", ev, exc.problem)
            return len(events)
        if position == 1:
            if ev.get("ref_hash") != item["record_hash"]:
                brk(
                    "unchained-record",
                    ev,
                    "the item record is not the one its first event names",
                    ev.get("ref_hash"),
                    item["record_hash"],
                )
                return len(events)
            if parent_ev is not None and ev["at"] < parent_ev["at"]:
                brk(
                    "rule-violation",
                    ev,
                    "custody rule 'time-order': the sub-sample's first event is earlier "
                    "than the parent's sub-sampling",
                    parent_ev["at"],
                    ev["at"],
                )
                return len(events)
        prev = ev["hash"]
    return len(events)
