"""Two-person approval: how many distinct names a plan needs, and which approvals count toward them.

The craft file's ``operations: approval: {approvers: 2, above_dv: 5 m/s}`` asks that a plan whose delta-v
is strictly above ``above_dv`` be approved by that many different people before it counts as approved
(the two-person rule for safety-critical commands: common practice). Without the rule, or at or below the
threshold, one approval suffices and the latest decision stands as before.

Under the rule the approvals that count are those since the plan's latest rejection (a rejection by
anyone still rejects), one per name (a name's latest), and only those that are not stale: the staleness
test is the caller's (the Monte Carlo one in ``uncertainty``, the nominal one in ``execution``), passed in.
"""
from __future__ import annotations

from typing import Any, Callable, Iterable, Mapping, Sequence

from ..core.entries import APPROVE, DECISIONS, REJECT, Entry

PARTIAL = "partial"
"""The approval state of a plan under the rule with some current approvals, but too few distinct names."""


def approver_name(entry: Entry) -> str:
    """The name a decision counts under: the entry's recorded ``by``. The one place that says so, so a store
    that records an authenticated name (the database store) can change what it means here alone."""
    return str(entry.by)


def name_to_record(ledger: Any, by: str) -> str:
    """The name a new decision will be recorded under, for the one-person-twice test before writing: ``by``,
    unless the store says otherwise through a ``recorded_name(by)`` method (a store that records the
    authenticated session user whatever ``--by`` says)."""
    hook = getattr(ledger, "recorded_name", None) or getattr(getattr(ledger, "file", None), "recorded_name", None)
    return str(hook(by)) if callable(hook) else str(by)


def person(name: str) -> str:
    """The identity two names are compared by: case and runs of blanks ignored, so 'a.  okafor' cannot
    count as a second person beside 'A. Okafor'."""
    return " ".join(name.split()).casefold()


def rule(craft: Any) -> Mapping[str, Any] | None:
    """The craft's approval rule (``{'approvers': int, 'above_dv_m_s': float}``), or None."""
    return (getattr(craft, "extra", None) or {}).get("approval")


def needed(craft: Any, plan: Entry) -> int:
    """Distinct approvers the plan needs: the rule's number when its delta-v is strictly above the
    threshold (a plan of exactly above_dv is not above it), else 1."""
    r = rule(craft)
    if not r:
        return 1
    return int(r["approvers"]) if float(plan.get("dv") or 0.0) > float(r["above_dv_m_s"]) else 1


def by_plan(entries: Iterable[Entry]) -> dict[int, list[Entry]]:
    """Plan seq -> its approvals and rejections in seq order (decisions are never corrected)."""
    out: dict[int, list[Entry]] = {}
    for e in entries:
        if e.kind in DECISIONS:
            out.setdefault(int(e.get("plan")), []).append(e)
    return out


def current(decisions: Sequence[Entry]) -> list[Entry]:
    """The approvals since the latest rejection, the latest one per person, in seq order."""
    out: dict[str, Entry] = {}
    for d in decisions:
        if d.kind == REJECT:
            out = {}
        else:
            out.pop(person(approver_name(d)), None)
            out[person(approver_name(d))] = d
    return list(out.values())


def tally(decisions: Sequence[Entry], need: int, stale: Callable[[Entry], str | None]) -> dict[str, Any]:
    """State of one plan under the rule: ``approval`` (approved | partial | stale | rejected | none),
    ``approvals_needed``, ``approvals_counted``, ``approvers`` (the names counted) and ``stale_approvers``
    (name -> why that approval no longer counts)."""
    out: dict[str, Any] = {"approvals_needed": need, "approvals_counted": 0, "approvers": [], "stale_approvers": {}}
    if not decisions:
        return dict(out, approval="none")
    if decisions[-1].kind == REJECT:
        return dict(out, approval="rejected")
    for d in current(decisions):
        why = stale(d)
        if why:
            out["stale_approvers"][approver_name(d)] = why
        else:
            out["approvers"].append(approver_name(d))
    n = out["approvals_counted"] = len(out["approvers"])
    out["approval"] = "approved" if n >= need else PARTIAL if n else "stale"
    return out


def words(row: Mapping[str, Any]) -> str:
    """A plan's approval state in words: '1 of 2 approvals' for a partial one, else the state itself."""
    state = str(row.get("approval") or "none")
    if state == PARTIAL:
        return f"{row.get('approvals_counted', 0)} of {row.get('approvals_needed', 2)} approvals"
    return state


def twice(decisions: Sequence[Entry], name: str, changed_since: Callable[[int], bool]) -> Entry | None:
    """The earlier approval by ``name`` that a new one would repeat: one since the latest rejection made on the
    ledger as it stands (nothing but decisions appended after the head its check saw). None if there is none."""
    for d in current(decisions):
        if d.kind == APPROVE and person(approver_name(d)) == person(name):
            head = int((d.get("head") or {}).get("seq", d.seq - 1))
            return None if changed_since(head) else d
    return None


__all__ = ["PARTIAL", "approver_name", "name_to_record", "person", "rule", "needed", "by_plan", "current", "tally", "words", "twice"]
