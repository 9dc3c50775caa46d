"""Chain-of-custody rules and event hashing.

An item's custody is an append-only list of events, numbered ``seq`` 1, 2, 3
... Each event stores the hash of the one before it (``prev_hash``; the
first event of an item uses :data:`~workbench.casefile.hashing.GENESIS_HASH`,
and the first event of a sub-sample uses the hash of its parent's
``sub-sampled`` event) and its own ``hash``: SHA-256 of the canonical JSON of
:data:`EVENT_FIELDS`. Local database ids are not hashed, so a chain keeps its
hashes when a case is moved to another store in a bundle.

Rules (:func:`apply_event`; each refusal names the rule):

``first-event``
    An item's first event is ``received`` (or ``sub-sampled`` for a sub-sample),
    and only then.
``disposed``
    Nothing is recorded after ``disposed``.
``time-order``
    An event's time is never earlier than the previous event's.
``holder``
    ``transferred``, ``returned``, ``received`` (again), ``disposed`` and taking a
    ``sub-sampled`` part need the current holder as actor or from-party;
    ``received``, ``transferred`` and ``returned`` need a to-party, who
    becomes the holder.
``sealed-sub-sample``
    A sealed item cannot be sub-sampled: its seal is broken first, on record
    (an ``opened`` event naming the seal). A sub-sample starts ``open``, or
    ``sealed`` when it is sealed at once (seal numbers given).
``seal-number``
    ``sealed`` needs a seal number (comma-separated for several seals).
``open-records-seal``
    ``opened`` on a sealed item names the seal broken (one of the item's seals).
``seal-state``
    Other events may not change the seal state (only ``sealed``/``opened`` do).
``correction``
    A ``correction`` names an existing earlier event (``corrects_seq``) and says
    what it corrects (a non-empty note). The original stays as it is.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Any

from workbench.casefile.hashing import record_hash
from workbench.errors import CustodyRuleError

__all__ = [
    "EVENT_FIELDS",
    "EVENT_KINDS",
    "SEAL_STATES",
    "STATUS_FIELDS",
    "STORE_ONLY_KINDS",
    "ChainState",
    "apply_event",
    "check_status_log",
    "event_hash",
    "split_seals",
    "status_entry",
]

#: Every kind of custody event.
EVENT_KINDS: tuple[str, ...] = (
    "received",
    "transferred",
    "sealed",
    "opened",
    "sub-sampled",
    "analysed",
    "reported",
    "reviewed",
    "returned",
    "disposed",
    "note",
    "correction",
)

#: Kinds only the store itself writes (with the record they stand for).
STORE_ONLY_KINDS: frozenset[str] = frozenset({"sub-sampled", "analysed", "reported", "reviewed"})

#: Seal states an event can record.
SEAL_STATES: tuple[str, ...] = ("sealed", "open", "unknown")

#: Fields covered by an event's hash, in no particular order (keys are sorted).
EVENT_FIELDS: tuple[str, ...] = (
    "case_number",
    "item_number",
    "seq",
    "kind",
    "at",
    "actor",
    "from_party",
    "to_party",
    "location",
    "seal_state",
    "seal_number",
    "note",
    "corrects_seq",
    "ref_kind",
    "ref_key",
    "ref_hash",
    "recorded_at",
    "prev_hash",
)

_MOVES = frozenset({"received", "transferred", "returned", "disposed"})
_NEEDS_TO = frozenset({"received", "transferred", "returned"})


def event_hash(event: dict[str, Any]) -> str:
    """Return the SHA-256 of an event's canonical JSON (all of :data:`EVENT_FIELDS`)."""
    return record_hash(event, EVENT_FIELDS)


def split_seals(seal_number: str | None) -> tuple[str, ...]:
    """Split a seal-number field (``"S1, S2"``) into its seals."""
    if not seal_number:
        return ()
    return tuple(s.strip() for s in str(seal_number).split(",") if s.strip())


@dataclass(frozen=True)
class ChainState:
    """What the chain says about an item after its events so far.

    Attributes
    ----------
    holder : str or None
        Who holds the item.
    seal_state : {"sealed", "open", "unknown"}
        Seal state.
    seals : tuple of str
        Seal numbers in place (when sealed).
    disposed : bool
        Whether it has been disposed of.
    last_at : str
        Time of the latest event.
    count : int
        Number of events.
    location : str or None
        Latest location recorded.
    """

    holder: str | None
    seal_state: str
    seals: tuple[str, ...]
    disposed: bool
    last_at: str
    count: int
    location: str | None = None

    def to_dict(self) -> dict[str, Any]:
        """Return a JSON-friendly form."""
        return {
            "holder": self.holder,
            "seal_state": self.seal_state,
            "seals": list(self.seals),
            "disposed": self.disposed,
            "last_at": self.last_at,
            "events": self.count,
            "location": self.location,
        }


def _refuse(rule: str, label: str, event: dict[str, Any], why: str, remedy: str) -> None:
    raise CustodyRuleError(
        f"custody rule '{rule}' refuses {event.get('kind')!r} event "
        f"#{event.get('seq')} on item {label} at {event.get('at')}: {why}",
        f"{remedy}; nothing was written",
    )


def apply_event(state: ChainState | None, event: dict[str, Any], label: str) -> ChainState:
    """Check one event against the rules and return the state after it.

    Parameters
    ----------
    state : ChainState or None
        State before the event; ``None`` for an item's first event.
    event : dict
        The event's fields (see :data:`EVENT_FIELDS`).
    label : str
        ``"CASE/ITEM"``, for messages.

    Returns
    -------
    ChainState
        The new state.

    Raises
    ------
    CustodyRuleError
        Naming the rule, the item and the event.
    """
    kind = event.get("kind")
    if kind not in EVENT_KINDS:
        _refuse("kind", label, event, f"unknown kind {kind!r}", f"use one of {EVENT_KINDS}")
    seal_state = event.get("seal_state")
    if seal_state not in SEAL_STATES:
        _refuse(
            "seal-state", label, event, f"seal state {seal_state!r}", f"use one of {SEAL_STATES}"
        )
    seals = split_seals(event.get("seal_number"))
    if seal_state == "sealed" and not seals:
        _refuse("seal-number", label, event, "a sealed state needs its seal number", "give --seal")
    if not str(event.get("actor") or "").strip():
        _refuse("actor", label, event, "no actor given", "say who did it (--actor)")
    at = str(event.get("at"))
    if state is None:
        if kind not in ("received", "sub-sampled"):
            _refuse(
                "first-event",
                label,
                event,
                "an item's history starts with 'received' (or 'sub-sampled')",
                "add the item with 'item add', which records its receipt",
            )
        if not event.get("to_party"):
            _refuse("holder", label, event, "no receiving party", "give --to")
        return ChainState(
            holder=str(event["to_party"]),
            seal_state=str(seal_state),
            seals=seals if seal_state == "sealed" else (),
            disposed=False,
            last_at=at,
            count=1,
            location=event.get("location"),
        )
    if state.disposed:
        _refuse(
            "disposed",
            label,
            event,
            "the item was disposed of; nothing can follow",
            "check the item number",
        )
    if at < state.last_at:
        _refuse(
            "time-order",
            label,
            event,
            f"its time is earlier than the previous event ({state.last_at})",
            "check the time; times in a chain never run backwards",
        )
    holder = state.holder
    if kind in _MOVES or kind == "sub-sampled":
        if holder not in (event.get("actor"), event.get("from_party")):
            _refuse(
                "holder",
                label,
                event,
                f"only the current holder ({holder}) can do this; actor is "
                f"{event.get('actor')!r}, from-party {event.get('from_party')!r}",
                "record the transfer to this person first, or name the holder as --from",
            )
    if kind in _NEEDS_TO:
        if not event.get("to_party"):
            _refuse("holder", label, event, "no receiving party", "give --to")
        holder = str(event["to_party"])
    if kind == "disposed" and event.get("to_party"):
        holder = str(event["to_party"])
    if kind == "sub-sampled" and not event.get("ref_key"):
        _refuse("sub-sample", label, event, "no sub-sample named", "use 'item add --parent'")
    if kind == "sub-sampled" and state.seal_state == "sealed":
        _refuse(
            "sealed-sub-sample",
            label,
            event,
            f"the item is sealed ({', '.join(state.seals)}); a part cannot be taken without "
            "breaking the seal on record",
            f"record 'custody add {label} opened --seal SEAL' first",
        )
    new_seal_state, new_seals = state.seal_state, state.seals
    if kind == "sealed":
        if seal_state != "sealed" or not seals:
            _refuse("seal-number", label, event, "sealing needs a seal number", "give --seal")
        new_seal_state = "sealed"
        new_seals = (
            tuple(dict.fromkeys(state.seals + seals)) if state.seal_state == "sealed" else seals
        )
    elif kind == "opened":
        if seal_state != "open":
            _refuse(
                "seal-state",
                label,
                event,
                "an 'opened' event records state 'open'",
                "drop --seal-state",
            )
        if state.seal_state == "sealed":
            if not seals or not set(seals) <= set(state.seals):
                _refuse(
                    "open-records-seal",
                    label,
                    event,
                    f"opening a sealed item records the seal broken (item seals: "
                    f"{', '.join(state.seals)}; given: {event.get('seal_number')!r})",
                    "give the seal number found on the package with --seal",
                )
        new_seal_state, new_seals = "open", ()
    else:
        if seal_state != state.seal_state:
            _refuse(
                "seal-state",
                label,
                event,
                f"records seal state {seal_state!r} but the item is {state.seal_state!r}; "
                "only 'sealed' and 'opened' events change it",
                "record a 'sealed' or 'opened' event",
            )
        if seals and set(seals) != set(state.seals):
            _refuse(
                "seal-state",
                label,
                event,
                f"records seal {event.get('seal_number')!r} but the item's seals are "
                f"{', '.join(state.seals) or 'none'}",
                "record a 'sealed' or 'opened' event for a seal change",
            )
    if kind == "correction":
        target = event.get("corrects_seq")
        if not isinstance(target, int) or not 1 <= target <= state.count:
            _refuse(
                "correction",
                label,
                event,
                f"it must name an existing event of this item, got {target!r}",
                "give --corrects SEQ of the event being corrected",
            )
        if not str(event.get("note") or "").strip():
            _refuse(
                "correction",
                label,
                event,
                "a correction states what it corrects",
                "give --note saying what was wrong and what is right",
            )
    elif event.get("corrects_seq") is not None:
        _refuse("correction", label, event, "only a correction corrects", "use kind correction")
    return replace(
        state,
        holder=holder,
        seal_state=new_seal_state,
        seals=new_seals,
        disposed=state.disposed or kind == "disposed",
        last_at=at,
        count=state.count + 1,
        location=event.get("location") or state.location,
    )


#: Fields hashed in each entry of a case's status log.
STATUS_FIELDS: tuple[str, ...] = ("status", "at", "prev_hash")


def status_entry(status: str, at: str, prev_hash: str) -> dict[str, Any]:
    """One entry of a case's status log, chained to ``prev_hash``.

    A case's status may change (open, closed, archived), so it is outside the
    case's record hash; instead every status the case has had is a hashed
    entry whose first ``prev_hash`` is the case's record hash, so the current
    status is covered like the rest of the case (in the store and in bundles).
    """
    entry = {"status": status, "at": at, "prev_hash": prev_hash}
    entry["hash"] = record_hash(entry, STATUS_FIELDS)
    return entry


def check_status_log(log: Any, case_hash: str, status: Any) -> str | None:
    """Return what is wrong with a case's status log, or None when it holds."""
    if not isinstance(log, list) or not log:
        return "the case has no status log"
    prev = case_hash
    for n, e in enumerate(log, start=1):
        if not isinstance(e, dict) or set(e) != {*STATUS_FIELDS, "hash"}:
            return f"status log entry {n} is malformed"
        if e["prev_hash"] != prev:
            return f"status log entry {n} does not link to the one before it"
        if record_hash(e, STATUS_FIELDS) != e["hash"]:
            return f"status log entry {n} does not match its hash"
        prev = e["hash"]
    if log[-1]["status"] != status:
        return f"the case's status {status!r} is not the last one logged ({log[-1]['status']!r})"
    return None
