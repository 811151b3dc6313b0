"""Approving or rejecting a pending plan, with the evidence the decision was made on.

The decision entry stores the check of the plan (verdict, probability, confidence, dv free after it)
and the chain head (seq, hash) of the ledger the check saw, so the record shows what was known. Whether
an approval still holds is worked out on reading (``uncertainty.approvals``), never by editing it.
"""
from __future__ import annotations

from typing import TYPE_CHECKING, Any

from ..core.entries import APPROVE, DECISIONS, REJECT
from ..errors import InputError
from . import uncertainty
from .ledger import Ledger
from .records import clean_text, plan_ref
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
    s = uncertainty.run(snap, samples, seed, progress)
    check = uncertainty.plan_check(snap, s, seq, confidence)
    data = {"plan": seq, "check": {k: check[k] for k in KEPT} | {"commitments": len(check["commitments"])},
            "head": {"seq": snap.head[0], "hash": snap.head[1]}}
    before = snap.resolved.decisions.get(seq)
    stored, warnings = ledger.record(kind, data, by=by, note=note, snap=snap)
    if before is not None and before.kind == kind:
        word = "approved" if kind == APPROVE else "rejected"
        warnings = [f"plan {seq} was already {word} (entry {before.seq} by {before.by}); this {kind} is recorded "
                    "as well and is now the one that stands", *warnings]
    if kind == APPROVE and check["verdict"] != "feasible":
        warnings = [f"plan {seq} approved although its check is {check['verdict']} "
                    f"({prob_text(check['probability'], check.get('samples'))} at confidence {confidence:g})", *warnings]
    return stored, check, warnings
