"""Property test: the store accepts exactly the custody events a small reference model accepts.

The reference model below is written independently of workbench.casefile.custody,
straight from the rules in the design brief (common practice for custody logs,
no published source).
"""

from __future__ import annotations

import tempfile
from datetime import UTC, datetime, timedelta

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from workbench.casefile import CaseStore
from workbench.errors import CustodyRuleError

PEOPLE = ["Ann", "Bo", "Cy"]
T0 = datetime(2025, 5, 1, 8, 0, tzinfo=UTC)

event_st = st.fixed_dictionaries(
    {
        "kind": st.sampled_from(
            [
                "transferred",
                "sealed",
                "opened",
                "note",
                "correction",
                "returned",
                "disposed",
                "received",
            ]
        ),
        "actor": st.sampled_from(PEOPLE),
        "from_party": st.sampled_from([None, *PEOPLE]),
        "to_party": st.sampled_from([None, *PEOPLE]),
        "seal_state": st.sampled_from([None, None, None, "sealed", "open", "unknown"]),
        "seal_number": st.sampled_from([None, None, "S1", "S2", "S1,S2"]),
        "note": st.sampled_from([None, "checked"]),
        "corrects": st.sampled_from([None, None, 1, 2, 9]),
        "dt_h": st.sampled_from([-1, 0, 1, 1, 2]),
    }
)


class Model:
    def __init__(self, seals: list[str]):
        self.holder = "Ann"
        self.state = "sealed" if seals else "unknown"
        self.seals = set(seals)
        self.disposed = False
        self.count = 1
        self.t = T0

    def accept(self, ev: dict, t: datetime) -> bool:
        if self.disposed or t < self.t:
            return False
        kind = ev["kind"]
        seals = {s for s in (ev["seal_number"] or "").split(",") if s}
        holder = self.holder
        if kind in ("received", "transferred", "returned", "disposed"):
            if holder not in (ev["actor"], ev["from_party"]):
                return False
            if kind != "disposed" and not ev["to_party"]:
                return False
            if ev["to_party"]:
                holder = ev["to_party"]
        state, new_seals = self.state, set(self.seals)
        if kind == "sealed":
            if (ev["seal_state"] or "sealed") != "sealed" or not seals:
                return False
            new_seals = (self.seals | seals) if self.state == "sealed" else seals
            state = "sealed"
        elif kind == "opened":
            if (ev["seal_state"] or "open") != "open":
                return False
            if self.state == "sealed" and (not seals or not seals <= self.seals):
                return False
            state, new_seals = "open", set()
        else:
            if (ev["seal_state"] or self.state) != self.state:
                return False
            if ev["seal_number"] is not None and seals != self.seals:
                return False
        if kind == "correction":
            if ev["corrects"] not in range(1, self.count + 1) or not ev["note"]:
                return False
        elif ev["corrects"] is not None:
            return False
        self.holder, self.state, self.seals = holder, state, new_seals
        self.disposed = kind == "disposed"
        self.count += 1
        self.t = t
        return True


@settings(
    max_examples=60,
    derandomize=True,
    database=None,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow],
)
@given(
    initial_seals=st.sampled_from([[], ["S1"], ["S1", "S2"]]),
    events=st.lists(event_st, min_size=1, max_size=12),
)
def test_store_matches_reference_model(initial_seals, events):
    with tempfile.TemporaryDirectory() as tmp, CaseStore.open(tmp) as s:
        s.create_case("P-1", "property case", "Testing")
        s.add_item(
            "P-1",
            "1",
            "thing",
            seal_numbers=initial_seals,
            received_by="Ann",
            received_from="Courier",
            at=T0,
        )
        model = Model(initial_seals)
        t = T0
        accepted = 0
        for ev in events:
            t = t + timedelta(hours=ev["dt_h"])
            expect = model.accept(ev, t)
            try:
                s.add_custody_event(
                    "P-1/1",
                    ev["kind"],
                    ev["actor"],
                    from_party=ev["from_party"],
                    to_party=ev["to_party"],
                    seal_state=ev["seal_state"],
                    seal_number=ev["seal_number"],
                    note=ev["note"],
                    corrects=ev["corrects"],
                    at=t,
                )
                got = True
            except CustodyRuleError:
                got = False
            assert got == expect, (ev, model.__dict__)
            if got:
                accepted += 1
            else:
                t = model.t  # a refused event does not move the clock of the chain
        item = s.get_item("P-1/1")
        assert item.event_count == 1 + accepted
        assert (item.holder, item.seal_state, set(item.seals), item.disposed) == (
            model.holder,
            model.state,
            model.seals,
            model.disposed,
        )
        assert s.verify("P-1").ok
