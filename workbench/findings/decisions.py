"""The analyst's decisions on an analysis, and the calls they produce.

The engine result is never changed. The analyst records decisions beside it
(:func:`record_decision`; stored append-only by
:mod:`workbench.casefile.decisions`), and :func:`effective_calls` folds the
result and the decisions into one call per element: which elements are
concluded present, which lines support them, and what goes on the sheet.

Actions (``target`` in brackets):

``accept_element`` / ``reject_element`` (element "Fe" or species "Fe I")
    Conclude the element present, or not, whatever the engine's verdict.
    A species target acts on that ion stage or X-ray family only.
``accept_line`` / ``reject_line`` ("<species>|<line id>")
    Confirm a line assignment, or strike it: a struck line is no longer
    evidence for the species (it stays listed, marked, on the sheet).
``add_element`` (element or species label, with ``lines``)
    An element the engine did not call, with the observed lines the analyst
    assigns to it (``position`` in the axis unit, optional ``label``).
``show_on_sheet`` / ``leave_off_sheet`` (element)
    Print an element that is not concluded (e.g. one the question asked
    about), or leave a concluded one off the printed summary.
``reverse`` (the decision's number in ``reverses``)
    Take back an earlier decision; both stay on record.

Every decision needs a reason; all of them are printed on the sheet and
covered by its signature.
"""

from __future__ import annotations

import json
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

from workbench.casefile.decisions import (
    DECISION_ACTIONS,
    DecisionRecord,
    append_decision,
    stored_decisions,
)
from workbench.errors import InputError, StoreIntegrityError

__all__ = [
    "CONCLUDED_LEVEL",
    "DECISION_ACTIONS",
    "DECISION_VERBS",
    "ElementCall",
    "check_sheet_decisions",
    "decide",
    "effective_calls",
    "element_of",
    "list_decisions",
    "parse_line_text",
    "record_decision",
    "stored_result",
    "with_species",
]

#: Lowest engine verdict level concluded present without a decision (2 = probable).
CONCLUDED_LEVEL: int = 2

_SYMBOL_RE = re.compile(r"^[A-Z][a-z]?$")


def element_of(label: str) -> str:
    """Return the element symbol of a species or element label ("Ti II" → "Ti")."""
    return str(label).strip().split(" ")[0]


@dataclass
class ElementCall:
    """One element as the sheet reports it, after the analyst's decisions.

    Attributes
    ----------
    element : str
        Symbol ("Fe").
    species : list of dict
        The engine's entries for this element (ion stages or X-ray families)
        with verdict level ≥ 1, or accepted or hand-added; each is the
        engine's element object with ``matched_lines`` filtered of struck lines
        and these keys added: ``accepted_lines`` and ``rejected_lines`` (line
        ids), ``decision`` ("accepted", "rejected" or "").
    verdict, verdict_level :
        Strongest engine verdict among the species ("added by the analyst", 3
        for a hand-added element; "not supported", 0 when none).
    concluded : bool
        Concluded present (engine level ≥ :data:`CONCLUDED_LEVEL` or accepted,
        and not rejected).
    on_sheet : bool
        Printed in the summary and the evidence.
    engine_concluded : bool
        What the engine alone said.
    added : bool
        Added by hand.
    decisions : list of int
        Numbers of the decisions in force that concern this element.
    """

    element: str
    species: list[dict[str, Any]] = field(default_factory=list)
    verdict: str = "not supported"
    verdict_level: int = 0
    concluded: bool = False
    on_sheet: bool = False
    engine_concluded: bool = False
    added: bool = False
    decisions: list[int] = field(default_factory=list)


_ROMAN = ("I", "II", "III", "IV", "V", "VI", "VII", "VIII", "IX", "X")


def with_species(result: Mapping[str, Any]) -> dict[str, Any]:
    """Return the result with a ``species`` label on every element entry.

    Engine results carry one ("Fe I", "Pb L"); older or hand-made ones may
    give only ``element`` with ``ion`` or ``family``.
    """
    out = dict(result)
    elements = []
    for el in result.get("elements") or []:
        if not isinstance(el, Mapping):
            continue
        el = dict(el)
        if not el.get("species"):
            symbol = str(el.get("element", "?"))
            ion, family = el.get("ion"), el.get("family")
            if isinstance(ion, int) and 1 <= ion <= len(_ROMAN):
                el["species"] = f"{symbol} {_ROMAN[ion - 1]}"
            elif family:
                el["species"] = f"{symbol} {family}"
            else:
                el["species"] = symbol
        elements.append(el)
    out["elements"] = elements
    return out


def _level(el: Mapping[str, Any]) -> int:
    v = el.get("verdict_level")
    return int(v) if isinstance(v, int | float) and not isinstance(v, bool) else 0


def _in_force(decisions: Sequence[DecisionRecord | Mapping[str, Any]]) -> list[dict[str, Any]]:
    ds = [d.to_dict() if isinstance(d, DecisionRecord) else dict(d) for d in decisions]
    reversed_seqs = {d["reverses"] for d in ds if d["action"] == "reverse"}
    return [d for d in ds if d["action"] != "reverse" and d["seq"] not in reversed_seqs]


def effective_calls(
    result: Mapping[str, Any], decisions: Sequence[DecisionRecord | Mapping[str, Any]] = ()
) -> list[ElementCall]:
    """Fold an engine result and the analyst's decisions into one call per element.

    Parameters
    ----------
    result : mapping
        The engine's result (schema 1).
    decisions : sequence of DecisionRecord or mapping
        The analysis's decisions in order (reversed ones are ignored).

    Returns
    -------
    list of ElementCall
        Every element with a species of verdict level ≥ 1, or named by a
        decision; concluded elements first (strongest verdict first), then by
        symbol.
    """
    result = with_species(result)
    active = _in_force(decisions)
    by_el: dict[str, ElementCall] = {}
    species_of: dict[str, dict[str, Any]] = {}
    for el in result.get("elements") or []:
        if isinstance(el, Mapping) and el.get("species"):
            species_of[str(el["species"])] = dict(el)

    def call(symbol: str) -> ElementCall:
        return by_el.setdefault(symbol, ElementCall(element=symbol))

    named = {element_of(d["target"].split("|")[0]) for d in active}
    species_decision: dict[str, str] = {}
    element_decision: dict[str, str] = {}
    line_decision: dict[tuple[str, str], str] = {}
    for d in active:
        target, act = d["target"], d["action"]
        if act in ("accept_element", "reject_element"):
            kind = "accepted" if act == "accept_element" else "rejected"
            if " " in target:
                species_decision[target] = kind
            else:
                element_decision[target] = kind
        elif act in ("accept_line", "reject_line"):
            sp, _, line_id = target.partition("|")
            line_decision[(sp, line_id)] = "accepted" if act == "accept_line" else "rejected"
    for name, el in sorted(species_of.items()):
        symbol = element_of(name)
        if _level(el) < 1 and name not in species_decision and symbol not in named:
            continue
        entry = dict(el)
        struck = [
            m.get("line_id")
            for m in el.get("matched_lines") or []
            if line_decision.get((name, str(m.get("line_id")))) == "rejected"
        ]
        entry["matched_lines"] = [
            m for m in el.get("matched_lines") or [] if m.get("line_id") not in struck
        ]
        entry["rejected_lines"] = [s for s in struck if s]
        entry["accepted_lines"] = sorted(
            lid for (sp, lid), v in line_decision.items() if sp == name and v == "accepted"
        )
        entry["decision"] = species_decision.get(name, "")
        if not entry["matched_lines"] and _level(el) >= 1 and entry["decision"] != "accepted":
            entry["decision"] = entry["decision"] or "no lines left"
        call(symbol).species.append(entry)
    for d in active:
        if d["action"] == "add_element":
            symbol = element_of(d["target"])
            c = call(symbol)
            c.added = True
            label = d["target"] if " " in d["target"] else symbol
            c.species.append(
                {
                    "species": label,
                    "element": symbol,
                    "verdict": "added by the analyst",
                    "verdict_level": 3,
                    "matched_lines": [dict(x) for x in d["lines"]],
                    "missing_lines": [],
                    "shared_lines": [],
                    "rejected_lines": [],
                    "accepted_lines": [],
                    "decision": "added",
                    "added_by_decision": d["seq"],
                }
            )
    for symbol, c in by_el.items():
        live = [s for s in c.species if s["decision"] not in ("rejected", "no lines left")]
        best = max(live or c.species, key=_level, default=None)
        if best is not None:
            c.verdict, c.verdict_level = str(best.get("verdict", "")), _level(best)
        c.engine_concluded = any(
            _level(s) >= CONCLUDED_LEVEL and not s.get("added_by_decision")
            for s in c.species
            if s["decision"] != "no lines left"
        )
        concluded = any((_level(s) >= CONCLUDED_LEVEL or s["decision"] == "accepted") for s in live)
        decision = element_decision.get(symbol)
        if decision == "accepted":
            concluded = True
        elif decision == "rejected":
            concluded = False
        c.concluded = concluded
        c.on_sheet = concluded
        c.decisions = [d["seq"] for d in active if element_of(d["target"].split("|")[0]) == symbol]
    for d in active:
        symbol = element_of(d["target"])
        if d["action"] == "show_on_sheet":
            c = call(symbol)
            c.on_sheet = True
            if d["seq"] not in c.decisions:
                c.decisions.append(d["seq"])
        elif d["action"] == "leave_off_sheet" and symbol in by_el:
            by_el[symbol].on_sheet = False
    return sorted(by_el.values(), key=lambda c: (not c.concluded, -c.verdict_level, c.element))


def stored_result(store: Any, analysis_id: int) -> dict[str, Any]:
    """Return the stored engine result of an analysis as a dict.

    Raises
    ------
    StoreIntegrityError
        If the stored bytes are not JSON.
    """
    a = store.get_analysis(int(analysis_id))
    try:
        return with_species(json.loads(bytes(a.result_json).decode("utf-8")))
    except (UnicodeDecodeError, json.JSONDecodeError) as exc:
        raise StoreIntegrityError(
            f"analysis {analysis_id}: the stored result is not JSON ({exc})",
            "re-run the analysis",
        ) from exc


def list_decisions(store: Any, analysis_id: int) -> list[DecisionRecord]:
    """Return the decisions recorded on an analysis, in order (reversed ones included).

    Parameters
    ----------
    store : CaseStore
        The open store.
    analysis_id : int
        The analysis.

    Returns
    -------
    list of DecisionRecord
        Ordered by ``seq``.
    """
    store.get_analysis(int(analysis_id))  # NotFoundError for an unknown analysis
    return stored_decisions(store, analysis_id)


def _species_names(result: Mapping[str, Any]) -> dict[str, Mapping[str, Any]]:
    return {
        str(el["species"]): el
        for el in result.get("elements") or []
        if isinstance(el, Mapping) and el.get("species")
    }


def _check_lines(lines: Sequence[Mapping[str, Any]]) -> list[dict[str, Any]]:
    if not lines:
        raise InputError(
            "an element added by hand needs at least one line",
            "give the observed position of each line (--line POSITION[:LABEL])",
        )
    out = []
    for i, ln in enumerate(lines, start=1):
        pos = ln.get("position") if isinstance(ln, Mapping) else None
        if not isinstance(pos, int | float) or isinstance(pos, bool) or not math.isfinite(pos):
            raise InputError(
                f"line {i} of the added element has no finite position ({pos!r})",
                "give each line's observed position as a number in the axis unit",
            )
        row: dict[str, Any] = {"position": float(pos)}
        ref = ln.get("reference")
        if ref is not None:
            if not isinstance(ref, int | float) or not math.isfinite(ref):
                raise InputError(f"line {i}: reference {ref!r} is not a number", "fix it")
            row["reference"] = float(ref)
        if ln.get("label"):
            row["label"] = str(ln["label"])
        out.append(row)
    return out


def record_decision(
    store: Any,
    analysis_id: int,
    *,
    action: str,
    target: str = "",
    reason: str,
    analyst: str,
    lines: Sequence[Mapping[str, Any]] = (),
    reverses: int | None = None,
    decided_at: str | None = None,
) -> DecisionRecord:
    """Check a decision against the analysis and record it (append-only).

    Parameters
    ----------
    store : CaseStore
        The open store.
    analysis_id : int
        The analysis decided on.
    action : str
        One of :data:`DECISION_ACTIONS` (see the module docstring).
    target : str
        Element ("Fe"), species ("Fe I", "Pb L") or ``"<species>|<line id>"``;
        ignored for ``reverse``.
    reason : str
        Why (required; printed on the sheet).
    analyst : str
        Who decides.
    lines : sequence of mapping, optional
        For ``add_element``: ``{"position": float, "label": str, "reference": float}``.
    reverses : int, optional
        For ``reverse``: the number of the decision taken back.
    decided_at : str, optional
        UTC time; now by default.

    Returns
    -------
    DecisionRecord
        The stored decision.

    Raises
    ------
    InputError
        If the target is not in the result, the line is not one of the
        species' matched lines, the reversed decision does not exist or was
        already reversed, or a required part is missing.
    """
    if action not in DECISION_ACTIONS:
        raise InputError(
            f"unknown decision {action!r}", f"use one of {', '.join(DECISION_ACTIONS)}"
        )
    result = stored_result(store, analysis_id)
    species = _species_names(result)
    elements = {element_of(s) for s in species}
    target = str(target or "").strip()
    line_data: list[dict[str, Any]] = []
    if action == "reverse":
        earlier = {d.seq: d for d in stored_decisions(store, analysis_id)}
        if reverses is None or int(reverses) not in earlier:
            raise InputError(
                f"there is no decision {reverses!r} on analysis {analysis_id} to reverse",
                "list the decisions ('workbench decisions list ANALYSIS_ID') and give its number",
            )
        if earlier[int(reverses)].action == "reverse":
            raise InputError(
                f"decision {reverses} is itself a reversal",
                "record the original decision again instead",
            )
        if any(d.action == "reverse" and d.reverses == int(reverses) for d in earlier.values()):
            raise InputError(f"decision {reverses} was already reversed", "nothing to do")
        target = f"decision {int(reverses)}"
    elif action in ("accept_line", "reject_line"):
        sp, sep, line_id = target.partition("|")
        if not sep or sp not in species:
            raise InputError(
                f"line target {target!r} does not name a species of this analysis",
                "write it as SPECIES|LINE_ID, e.g. 'Fe I|optical:Fe:1:404.58148'",
            )
        ids = {str(m.get("line_id")) for m in species[sp].get("matched_lines") or []}
        if line_id not in ids:
            raise InputError(
                f"{line_id!r} is not a line matched to {sp} in analysis {analysis_id}",
                "give one of the species' matched line ids (shown with 'workbench decisions "
                "calls')",
            )
    elif action == "add_element":
        symbol = element_of(target)
        if not _SYMBOL_RE.match(symbol):
            raise InputError(
                f"{target!r} is not an element symbol", "give the symbol, e.g. Pb or 'Pb L'"
            )
        line_data = _check_lines(lines)
    else:
        symbol = element_of(target)
        known = target in species or (" " not in target and target in elements)
        if not known and not (action == "show_on_sheet" and _SYMBOL_RE.match(target)):
            raise InputError(
                f"{target!r} is not an element or species considered in analysis {analysis_id}",
                "give an element symbol or a species as the result names it (e.g. Fe or Fe I)",
            )
    return append_decision(
        store,
        analysis_id,
        action=action,
        target=target,
        reason=reason,
        analyst=analyst,
        lines=line_data,
        reverses=None if reverses is None else int(reverses),
        decided_at=decided_at,
    )


def check_sheet_decisions(store: Any, json_bytes: bytes) -> list[str]:
    """Check the decisions a sheet reports against the store's record of them.

    Parameters
    ----------
    store : CaseStore
        The store holding the analysis.
    json_bytes : bytes
        The sheet's canonical JSON.

    Returns
    -------
    list of str
        Problems: a stored decision altered after it was recorded (its hash or
        chain no longer holds), or a decision printed on the sheet that the
        store does not hold with the same hash. Empty when all agree.
    """
    from workbench.casefile.decisions import check_decisions
    from workbench.errors import NotFoundError

    try:
        content = json.loads(bytes(json_bytes).decode("utf-8"))
        analysis_id = int(content["analysis"]["id"])
    except (UnicodeDecodeError, ValueError, KeyError, TypeError):
        return []  # not a sheet of this store's kind; the signature checks cover it
    # A sheet moved to another store in a bundle keeps its analysis's hash, not its row id.
    row = store.connection.execute(
        "SELECT id FROM analyses WHERE record_hash=?",
        (str(content["analysis"].get("record_hash")),),
    ).fetchone()
    if row is not None:
        analysis_id = int(row[0])
    printed = [d for d in content.get("decisions") or [] if isinstance(d, Mapping)]
    try:
        problems = check_decisions(store, analysis_id)
    except NotFoundError:
        return [f"analysis {analysis_id} is not in this store"] if printed else []
    stored = {d.seq: d.record_hash for d in stored_decisions(store, analysis_id)}
    for d in printed:
        if stored.get(int(d.get("seq", 0))) != d.get("record_hash"):
            problems.append(f"decision {d.get('seq')} on the sheet is not the one on record")
    return problems


#: What an analyst says (CLI and app), each mapped to a stored action by :func:`decide`.
DECISION_VERBS: tuple[str, ...] = ("accept", "reject", "add", "show", "leave-off", "reverse")


def parse_line_text(text: str) -> dict[str, Any]:
    """A hand-added line as typed: ``"405.78"`` or ``"405.78:Pb I 405.78"`` (axis unit).

    Raises
    ------
    InputError
        If the position is not a number.
    """
    pos, _, label = str(text).partition(":")
    try:
        value = float(pos)
    except ValueError as exc:
        raise InputError(
            f"line {text!r}: {pos!r} is not a number",
            "give the observed position in the axis unit, e.g. 405.78:Pb I 405.78",
        ) from exc
    if not math.isfinite(value):
        raise InputError(f"line {text!r}: the position is not finite", "give a finite number")
    out: dict[str, Any] = {"position": value}
    if label.strip():
        out["label"] = label.strip()
    return out


def decide(
    store: Any,
    analysis_id: int,
    verb: str,
    target: str,
    *,
    reason: str,
    analyst: str,
    line_texts: Sequence[str] = (),
) -> DecisionRecord:
    """Record what the analyst said, as the CLI and the app both say it.

    ``accept``/``reject`` a species or element (``"Fe I"``, ``"Fe"``) or a line
    assignment (``"Fe I|<line id>"``); ``add`` an element by hand with its
    lines (``line_texts``, see :func:`parse_line_text`); ``show`` or
    ``leave-off`` an element on the sheet; ``reverse`` decision number
    ``target``. Every decision needs a reason.

    Returns
    -------
    DecisionRecord
        The stored decision.

    Raises
    ------
    InputError
        For an unknown verb, lines given to anything but ``add``, or a
        ``reverse`` target that is not a decision number.
    """
    if verb not in DECISION_VERBS:
        raise InputError(f"unknown decision {verb!r}", f"use one of {', '.join(DECISION_VERBS)}")
    reverses = None
    if verb == "reverse":
        try:
            reverses = int(str(target).strip())
        except ValueError as exc:
            raise InputError(
                f"reverse needs a decision number, not {target!r}",
                "give the number of the decision to take back (listed with the decisions)",
            ) from exc
        action = "reverse"
    elif verb in ("accept", "reject"):
        action = f"{verb}_{'line' if '|' in str(target) else 'element'}"
    else:
        action = {"add": "add_element", "show": "show_on_sheet", "leave-off": "leave_off_sheet"}[
            verb
        ]
    lines = [parse_line_text(x) for x in line_texts if str(x).strip()]
    if lines and action != "add_element":
        raise InputError("lines are only for 'add'", "drop the lines, or use 'add'")
    return record_decision(
        store,
        analysis_id,
        action=action,
        target=target,
        reason=reason,
        analyst=analyst,
        lines=lines,
        reverses=reverses,
    )
