"""Approving or rejecting a pending plan, with the evidence the decision was made on.

The decision entry stores the check of the plan (verdict, probability, confidence, dv free after it)
and the chain head (seq, hash) of the ledger the check saw, so the record shows what was known. Whether
an approval still holds is worked out on reading (``uncertainty.approvals``), never by editing it.
"""
from __future__ import annotations

from typing import TYPE_CHECKING, Any

from ..core.entries import APPROVE, DECISIONS, REJECT
from ..errors import InputError
from . import approvalrule, uncertainty
from .ledger import Ledger
from .records import clean_text, entry_from_record, plan_ref
from .probtext import prob_text

if TYPE_CHECKING:
    from ..core import montecarlo as mc

KEPT = ("engine", "dv_m_s", "verdict", "probability", "probability_se", "confidence", "dv_free_after_m_s",
        "dv_free_after_low_m_s", "samples", "seed", "limiting_tank", "least_margin_tank", "reason")


def decide(ledger: Ledger, kind: str, plan: Any, by: str | None, note: str | None = None,
           confidence: float = uncertainty.DEFAULT_CONFIDENCE, samples: int = uncertainty.DEFAULT_SAMPLES,
           seed: int = uncertainty.DEFAULT_SEED, progress: mc.Progress | None = None
           ) -> tuple[dict[str, Any], dict[str, Any], list[str]]:
    """Check the plan, then append the decision. Returns (stored record, check, warnings).

    Every input is checked before the (possibly long) Monte Carlo, and nothing is written on an error."""
    if kind not in DECISIONS:
        raise InputError(f"unknown decision '{kind}' (expected {' or '.join(DECISIONS)})")
    if not clean_text(by, "--by"):
        raise InputError(f"{kind}: --by is required (the name of the person who decides)")
    if kind == REJECT and not clean_text(note, "--note"):
        raise InputError("reject: --note is required (why the plan is rejected)")
    uncertainty.validate(confidence, samples, seed)
    snap = ledger.snapshot()
    seq = plan_ref(snap.resolved, plan, "an approval" if kind == APPROVE else "a rejection")
    need = approvalrule.needed(snap.craft, snap.resolved.effective[seq])
    history = approvalrule.by_plan(snap.entries).get(seq, []) if need > 1 else []
    if kind == APPROVE and need > 1:
        again = approvalrule.twice(history, approvalrule.name_to_record(ledger, str(by)),
                                   lambda head: uncertainty._changed_since(snap, head))
        if again is not None:
            raise InputError(f"approve: plan {seq} is already approved by {approvalrule.approver_name(again)} "
                             f"(entry {again.seq}) on the ledger as it stands; it needs {need} distinct names, "
                             "so the next approval must come from someone else")
    s = uncertainty.run(snap, samples, seed, progress)
    check = uncertainty.plan_check(snap, s, seq, confidence)
    data = {"plan": seq, "check": {k: check[k] for k in KEPT} | {"commitments": len(check["commitments"])},
            "head": {"seq": snap.head[0], "hash": snap.head[1]}}
    before = snap.resolved.decisions.get(seq)
    stored, warnings = ledger.record(kind, data, by=by, note=note, snap=snap)
    if before is not None and before.kind == kind and need <= 1:
        word = "approved" if kind == APPROVE else "rejected"
        warnings = [f"plan {seq} was already {word} (entry {before.seq} by {before.by}); this {kind} is recorded "
                    "as well and is now the one that stands", *warnings]
    if need > 1:
        mine = [*history, entry_from_record(stored)]
        checks: dict[float, dict[str, Any]] = {}
        t = approvalrule.tally(mine, need, lambda a: uncertainty._recheck(snap, s, seq, a, checks)[1])
        check = dict(check, approvals_needed=need, approvals_counted=t["approvals_counted"], approvers=t["approvers"])
        if kind == APPROVE and t["approval"] != "approved":
            warnings = [f"plan {seq} has {approvalrule.words(t)}: the craft's approval rule needs {need} distinct "
                        "names before it counts as approved", *warnings]
    if kind == APPROVE and check["verdict"] != "feasible":
        warnings = [f"plan {seq} approved although its check is {check['verdict']} "
                    f"({prob_text(check['probability'], check.get('samples'))} at confidence {confidence:g})", *warnings]
    return stored, check, warnings
