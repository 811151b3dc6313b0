"""Commands approve and reject, and the confidence options status and check share."""
from __future__ import annotations

from ..core.entries import APPROVE, REJECT
from ..services import approvals, uncertainty
from ..services.probtext import prob_text
from .common import console, dump_json, esc, open_ledger, warn
from .helptext import about
from .progress import Progress


def add_confidence_options(p) -> None:
    p.add_argument("--confidence", type=float, default=uncertainty.DEFAULT_CONFIDENCE,
                   help="probability for low bounds and verdicts, e.g. 0.99 (default %(default)s)")
    p.add_argument("--samples", type=int, default=uncertainty.DEFAULT_SAMPLES,
                   help="Monte Carlo samples, e.g. 20000 (default %(default)s)")
    p.add_argument("--seed", type=int, default=uncertainty.DEFAULT_SEED,
                   help="random seed, e.g. 7; the same seed on the same ledger gives the same figures (default %(default)s)")


def register(sub) -> None:
    p = sub.add_parser("approve", **about("approve a pending plan; records the check it was based on"))
    p.add_argument("--plan", required=True, help="id of the pending plan, e.g. 12")
    p.add_argument("--by", required=True, help="name of the person approving, e.g. 'A. Lindqvist'; under the craft's "
                   "operations: approval rule each name counts once")
    p.add_argument("--note", help="free text kept with the approval, e.g. 'per FD review 14'")
    add_confidence_options(p)
    p.add_argument("--json", action="store_true", help="print the result as JSON, e.g. to keep the check")
    p.set_defaults(func=cmd_approve)

    p = sub.add_parser("reject", **about("reject a pending plan (it stays pending until withdrawn); --note says why"))
    p.add_argument("--plan", required=True, help="id of the pending plan, e.g. 12")
    p.add_argument("--by", required=True, help="name of the person rejecting, e.g. 'A. Lindqvist'")
    p.add_argument("--note", required=True, help="why the plan is rejected, e.g. 'margin below the rule'")
    add_confidence_options(p)
    p.add_argument("--json", action="store_true", help="print the result as JSON, e.g. to keep the check")
    p.set_defaults(func=cmd_reject)


def _decide(args, kind: str) -> int:
    with Progress(f"checking plan {args.plan}") as progress:
        stored, check, warnings = approvals.decide(open_ledger(args), kind, args.plan, args.by, args.note,
                                                   confidence=args.confidence, samples=args.samples, seed=args.seed,
                                                   progress=progress)
    if args.json:
        extra = {k: check[k] for k in ("approvals_needed", "approvals_counted", "approvers") if k in check}
        dump_json({"id": stored["seq"], "kind": kind, "plan": stored["data"]["plan"], "hash": stored["hash"],
                   "check": stored["data"]["check"], "head": stored["data"]["head"], **extra, "warnings": warnings})
        return 0
    word = "approved" if kind == APPROVE else "rejected"
    out = console()
    out.print(f"plan {stored['data']['plan']} {word} by {esc(stored['by'])} (entry {stored['seq']}); check "
              f"{check['verdict']}, reserves intact with {prob_text(check['probability'], check.get('samples'))} "
              f"(confidence {check['confidence']:g}), dv free after {check['dv_free_after_m_s']:.2f} m/s"
              + (f"; {check['approvals_counted']} of {check['approvals_needed']} approvals ("
                 f"{esc(', '.join(check['approvers']))})" if kind == APPROVE and "approvals_needed" in check else ""))
    warn(warnings)
    out.print(f"[dim]{esc(check['caution'])}[/]")
    return 0


def cmd_approve(args) -> int:
    return _decide(args, APPROVE)


def cmd_reject(args) -> int:
    return _decide(args, REJECT)
