"""Uncertainty for the shells: low bounds at a confidence, checks with a probability, approval states.

One Monte Carlo run (``core.montecarlo``) gives every sample's final state; status figures, the check of
a proposed burn and the re-check of every approved plan are then cheap passes over those samples. All
functions return plain dicts (JSON-ready), so the command line and the console show the same figures.
"""
from __future__ import annotations

import math
import os
from typing import TYPE_CHECKING, Any, Sequence

import numpy as np

from ..core import capability as cap
from ..core.entries import APPROVE, DECISIONS
from ..errors import InputError
from .ledger import Snapshot
from .forecast import forecast
from .timefmt import iso
from .warnings import combined
from .views import CAUTION, status

if TYPE_CHECKING:
    from ..core import montecarlo as mc

DEFAULT_CONFIDENCE = 0.99
DEFAULT_SAMPLES = 10_000
DEFAULT_SEED = 24301
"""The Monte Carlo's own defaults (core.montecarlo; a test keeps the two equal). Written out here so that a
status served from the cache does not import the sampler."""
WORKERS = min(2, os.cpu_count() or 1)
"""Threads the Monte Carlo's chunks are shared between (the answer does not depend on it)."""
STALE_DV_ABS_M_S = 0.1
STALE_DV_REL = 0.01
"""An approval goes stale when the re-computed check has another verdict, or its dv free after the burn
moved by more than max(0.1 m/s, 1 % of the approved figure). 1 % is the default one-sigma Isp knowledge
(core.sigmas): a smaller move is inside what the figure could be known to anyway. Project choice."""


TABLES_SAMPLER = "blowdown-feedback-1"
"""Names the Monte Carlo of craft with performance tables (``core.mcblowdown``) in the confidence cache key."""
SEGMENTS_SAMPLER = "segments-2"
"""Names the constant-performance Monte Carlo (``core.montecarlo``) in the confidence cache key. 2: craft with
delta-v burns on several engines draw their additive errors by conditioning (``montecarlo._engines``), other
random numbers than before, so a result cached by the previous sampler is not reused."""


MAX_SAMPLES = 1_000_000
"""Most samples one run takes: its arrays (craft draws, final states, capability per sample) stay within a few
hundred megabytes, and 1e6 samples already put a 99.9 % bound's empirical quantile on 1,000 samples."""


MAX_SEED = 2**63 - 1
"""Largest seed: a signed 64-bit integer, what every JSON reader of the ledger and cache keeps exactly."""


def validate(confidence: float, samples: int, seed: int = DEFAULT_SEED) -> None:
    if not (isinstance(confidence, float) and 0.0 < confidence < 1.0):
        raise InputError(f"--confidence: expected a probability strictly between 0 and 1 such as 0.99, got {confidence!r}")
    if samples < 1:
        raise InputError(f"--samples: expected a positive number of samples, got {samples}")
    if samples > MAX_SAMPLES:
        raise InputError(f"--samples: at most {MAX_SAMPLES:,} samples per run, got {samples:,}")
    if seed < 0 or seed > MAX_SEED:
        raise InputError(f"--seed: expected a whole number from 0 to {MAX_SEED} (it is stored in the ledger's "
                         f"JSON), got {str(seed)[:40]}")
    if (1.0 - confidence) * samples < 1.0:
        need = math.ceil(1.0 / (1.0 - confidence))
        raise InputError(f"--confidence {confidence:g} needs at least {need} samples for a low bound (--samples)")


def run(snap: Snapshot, samples: int = DEFAULT_SAMPLES, seed: int = DEFAULT_SEED,
        progress: mc.Progress | None = None) -> mc.Samples:
    from ..core import montecarlo as mc  # noqa: PLC0415 - only when samples are drawn

    view = snap.blowdown
    if view is not None and view.flown is not None:  # performance tables: each sample's own feedback
        return _run_tables(snap, samples, seed, progress)
    return mc.simulate(snap.flight_craft, snap.flight_events, samples=samples, seed=seed, progress=progress,
                       workers=WORKERS)


def _run_tables(snap: Snapshot, samples: int, seed: int, progress) -> mc.Samples:
    """``core.mcblowdown``: every sample's draws move its later feed pressures; its capability integrates
    ve(m) over its own remaining propellant. The linearisation depends only on the snapshot, so it is
    kept on the snapshot's blowdown view for the other runs (checks, approvals) on the same snapshot."""
    from ..core import mcblowdown  # noqa: PLC0415

    view = snap.blowdown
    lin = view.__dict__.get("_mc_linear")
    if lin is None:
        lin = mcblowdown.linearise(snap.craft, view.model, view.events, snap.replay, view.flown)
        view.__dict__["_mc_linear"] = lin  # a frozen dataclass: cached the way cached_property does
    return mcblowdown.simulate(snap.craft, view.model, view.events, snap.replay, view.flown, view.temperature_k,
                               samples, seed, progress, linear=lin)


def commitments(snap: Snapshot, approved_only: bool = False, exclude: int | None = None) -> list[tuple[str, float]]:
    """Pending plans counted before a burn: all of them, or only those whose latest decision approves."""
    out = []
    for p in snap.resolved.pending:
        if p.seq == exclude:
            continue
        decision = snap.resolved.decisions.get(p.seq)
        if approved_only and (decision is None or decision.kind != APPROVE):
            continue
        if approved_only and not _enough(snap, p):
            continue
        out.append((str(p.get("engine")), float(p.get("dv"))))
    return out


def _enough(snap: Snapshot, plan) -> bool:
    """Whether the plan has approvals from as many distinct names as the craft's approval rule asks (staleness
    aside, as for a single approval here)."""
    from . import approvalrule  # noqa: PLC0415

    need = approvalrule.needed(snap.craft, plan)
    if need <= 1:
        return True
    mine = [e for e in snap.entries if e.kind in DECISIONS and int(e.get("plan")) == plan.seq]
    return len(approvalrule.current(mine)) >= need


def check_from(snap: Snapshot, s: mc.Samples, engine: str, dv: float, confidence: float,
               plans: Sequence[tuple[str, float]]) -> dict[str, Any]:
    """The nominal check plus its probability over the samples and the three-way verdict."""
    from ..core import sampled  # noqa: PLC0415 - only once samples exist

    from .views import _flyer  # noqa: PLC0415

    res = cap.check(snap.flight_craft, snap.state, engine, dv, plans, fly_fn=_flyer(snap))
    sc = sampled.check_samples(snap.flight_craft, s, engine, dv, plans)
    p = sc.probability
    verdict = "infeasible" if not res.feasible else "feasible" if p >= confidence else "marginal"
    return {
        "engine": res.engine, "dv_m_s": res.dv_m_s, "verdict": verdict,
        "probability": p, "probability_se": sc.standard_error, "confidence": confidence,
        "propellant_kg": res.propellant_kg, "propellant_by_tank_kg": res.propellant_by_tank,
        "dv_free_after_m_s": res.dv_free_after_m_s,
        "dv_free_after_low_m_s": sampled.low_bound(sc.dv_free_after, confidence),
        "limiting_tank": res.limiting_tank,
        "least_margin_tank": res.least_margin_tank, "margin_after_reserves_kg": res.margin_by_tank,
        "commitments": [{"engine": e, "dv_m_s": d} for e, d in res.commitments],
        "samples": len(s), "seed": s.seed, "reason": res.reason, "caution": CAUTION,
    }


def confidence_check(snap: Snapshot, engine: str, dv: float, confidence: float = DEFAULT_CONFIDENCE,
                     approved_only: bool = False, samples: int = DEFAULT_SAMPLES, seed: int = DEFAULT_SEED,
                     progress: mc.Progress | None = None) -> dict[str, Any]:
    """``propledger check`` with a confidence: feasible, marginal (nominal only) or infeasible."""
    validate(confidence, samples, seed)
    if engine not in snap.craft.engine_ids:
        raise InputError(f"--engine: unknown engine '{engine}' (engines: {', '.join(snap.craft.engine_ids)})")
    s = run(snap, samples, seed, progress)
    out = check_from(snap, s, engine, dv, confidence, commitments(snap, approved_only))
    out["approved_only"] = approved_only
    return out


def plan_check(snap: Snapshot, s: mc.Samples, plan: int, confidence: float) -> dict[str, Any]:
    """The check a decision on a pending plan rests on: the plan's burn on top of every other pending plan
    (what ``check`` would say of the same burn were the plan not yet recorded)."""
    entry = snap.resolved.effective[plan]
    return check_from(snap, s, str(entry.get("engine")), float(entry.get("dv")), confidence,
                      commitments(snap, exclude=plan))


def _changed_since(snap: Snapshot, head_seq: int) -> bool:
    """Whether anything but decisions was appended after the head the decision's check saw."""
    return any(e.seq > head_seq and e.kind not in DECISIONS for e in snap.entries)


VERDICT_KEYS = ("verdict", "probability", "confidence", "samples", "reason", "dv_free_after_m_s")


def _recheck(snap: Snapshot, s: mc.Samples, seq: int, d, checks: dict[float, dict[str, Any]]
             ) -> tuple[dict[str, Any] | None, str | None]:
    """(check now, why stale) of one approval: (None, None) when nothing but decisions came after the head its
    check saw. ``checks`` caches the plan's check now per confidence (approvals may differ in it)."""
    if not _changed_since(snap, int((d.get("head") or {}).get("seq", d.seq - 1))):
        return None, None
    then = dict(d.get("check") or {})
    conf = float(then.get("confidence", DEFAULT_CONFIDENCE))
    if conf not in checks:
        checks[conf] = plan_check(snap, s, seq, conf)
    now = checks[conf]
    moved = abs(now["dv_free_after_m_s"] - float(then.get("dv_free_after_m_s", 0.0)))
    tolerance = max(STALE_DV_ABS_M_S, STALE_DV_REL * abs(float(then.get("dv_free_after_m_s", 0.0))))
    if now["verdict"] != then.get("verdict"):
        return now, f"verdict now {now['verdict']}, was {then.get('verdict')}"
    if moved > tolerance:
        return now, f"dv free after moved {moved:.3f} m/s (tolerance {tolerance:.3f})"
    return now, None


def approvals(snap: Snapshot, s: mc.Samples, confidence: float = DEFAULT_CONFIDENCE) -> dict[int, dict[str, Any]]:
    """Per pending plan: approval approved | rejected | stale | none (| partial under the craft's two-person
    rule, ``approvalrule``), with the evidence for the answer, ``approvals_needed`` and ``approvals_counted``,
    and ``verdict_now``: the plan's check now at ``confidence`` (the other pending plans flown first)."""
    from . import approvalrule  # noqa: PLC0415

    out: dict[int, dict[str, Any]] = {}
    history = approvalrule.by_plan(snap.entries) if approvalrule.rule(snap.craft) else {}
    for p in snap.resolved.pending:
        current = plan_check(snap, s, p.seq, confidence)
        verdict_now = {k: current[k] for k in VERDICT_KEYS if k in current}
        need = approvalrule.needed(snap.craft, p)
        d = snap.resolved.decisions.get(p.seq)
        if d is None:
            out[p.seq] = {"approval": "none", "verdict_now": verdict_now, "approvals_needed": need,
                          "approvals_counted": 0}
            continue
        then = dict(d.get("check") or {})
        row: dict[str, Any] = {"approval": "approved" if d.kind == APPROVE else "rejected", "entry": d.seq,
                               "by": d.by, "at": iso(d.at), "note": d.note, "check_then": then}
        checks: dict[float, dict[str, Any]] = {}
        if d.kind == APPROVE:
            now, why = _recheck(snap, s, p.seq, d, checks)
            if now is not None:
                row["check_now"] = {k: now[k] for k in ("verdict", "probability", "confidence", "dv_free_after_m_s")}
            if why:
                row.update(approval="stale", reason=why)
        if need > 1:
            t = approvalrule.tally(history.get(p.seq, []), need, lambda a: _recheck(snap, s, p.seq, a, checks)[1])
            row.update(t)
            if t["approval"] != "stale":
                row.pop("reason", None)
        else:
            row.update(approvals_needed=1, approvals_counted=int(row["approval"] == "approved"))
        row["verdict_now"] = verdict_now
        out[p.seq] = row
    return out


def confidence_status(snapshot: Snapshot, confidence: float = DEFAULT_CONFIDENCE, samples: int = DEFAULT_SAMPLES,
                      seed: int = DEFAULT_SEED, progress: mc.Progress | None = None) -> dict[str, Any]:
    """Nominal figures with their low bounds at ``confidence``, reserve probability and approval states.

    Pure computation on a snapshot (no I/O), safe to run in a worker thread; ``progress(done, total)``
    is called after each chunk of samples."""
    validate(confidence, samples, seed)
    if snapshot.path and snapshot.head[1] and snapshot.integrity is None:
        from ..store.seam import side_path  # noqa: PLC0415
        from .confcache import cached  # noqa: PLC0415

        key = {"head": list(snapshot.head), "confidence": confidence, "samples": samples, "seed": seed}
        if snapshot.blowdown is not None and snapshot.blowdown.flown is not None:
            key["sampler"] = TABLES_SAMPLER  # a result cached by the constant-performance stand-in is not reused
        else:
            key["sampler"] = SEGMENTS_SAMPLER
        return cached(side_path(snapshot.path), key, lambda: _confidence_status(snapshot, confidence, samples, seed, progress))
    return _confidence_status(snapshot, confidence, samples, seed, progress)


def _confidence_status(snapshot: Snapshot, confidence: float, samples: int, seed: int,
                       progress: mc.Progress | None) -> dict[str, Any]:
    from ..core import sampled  # noqa: PLC0415 - only once samples exist

    craft = snapshot.craft
    s = run(snapshot, samples, seed, progress)
    usable, avail, free = sampled.capability_samples(craft, s)
    nominal = {e.engine: e for e in snapshot.engines}

    def stats(x) -> dict[str, float]:
        return {"mean": float(x.mean()), "sd": float(x.std(ddof=1)) if len(x) > 1 else 0.0,
                "low": sampled.low_bound(x, confidence)}

    # Each column's statistics once: its low bound is both the headline figure and the stats' "low".
    usable_st = [stats(usable[:, i]) for i in range(len(craft.tanks))]
    free_st = [stats(free[:, i]) for i in range(len(craft.engines))]
    avail_st = [stats(avail[:, i]) for i in range(len(craft.engines))]
    return {
        "confidence": confidence, "samples": len(s), "seed": s.seed, "segments": s.segments,
        "mass_kg": dict(stats(s.mass_kg), nominal=snapshot.state.mass_kg),
        "tanks": {t.id: {"usable_kg": float(snapshot.usable_kg[i]), "usable_low_kg": usable_st[i]["low"],
                         "usable": usable_st[i], "remaining": stats(s.remaining_kg[:, i])}
                  for i, t in enumerate(craft.tanks)},
        "engines": {e.id: {"dv_free_m_s": nominal[e.id].dv_free_m_s, "dv_free_low_m_s": free_st[i]["low"],
                           "dv_available_m_s": nominal[e.id].dv_available_m_s,
                           "dv_available_low_m_s": avail_st[i]["low"],
                           "dv_free": free_st[i], "dv_available": avail_st[i]}
                    for i, e in enumerate(craft.engines)},
        "reserves_probability": float(sampled.reserves_intact(craft, s).mean()),
        "mixture_outage": _outage(craft, s, confidence),
        "approvals": {str(k): v for k, v in approvals(snapshot, s, confidence).items()},
        "caution": CAUTION,
    }


def _outage(craft, s: mc.Samples, confidence: float) -> list[dict[str, Any]]:
    """Per bipropellant pair over the samples: the stranding exceeded only with probability 1 - confidence
    (what the low bounds allow for), its mean, and in what share of samples each tank is the one left."""
    from ..core import sampled  # noqa: PLC0415

    rows = []
    for p, kg, tank in sampled.outage_samples(craft, s):
        ids = craft.tank_ids
        share = {ids[t]: float(np.mean((tank == t) & (kg > 0))) for t in (p.first, p.second)}
        rows.append({"tanks": [ids[p.first], ids[p.second]],
                     "stranded_high_kg": float(np.quantile(kg, confidence, method="higher")),
                     "stranded_mean_kg": float(kg.mean()), "stranded_tank_share": share})
    return rows


def status_with_confidence(snap: Snapshot, confidence: float = DEFAULT_CONFIDENCE, samples: int = DEFAULT_SAMPLES,
                           seed: int = DEFAULT_SEED, progress: mc.Progress | None = None, *,
                           with_thrusters: bool = True) -> dict[str, Any]:
    """``views.status`` plus confidence, per tank usable_low_kg, per engine dv_free_low_m_s, plan approvals."""
    data = status(snap, with_thrusters=with_thrusters)
    u = confidence_status(snap, confidence, samples, seed, progress)
    data["confidence"] = confidence
    for tid, t in data["tanks"].items():
        t["usable_low_kg"] = u["tanks"][tid]["usable_low_kg"]
    for eid, e in data["engines"].items():
        e["dv_free_low_m_s"] = u["engines"][eid]["dv_free_low_m_s"]
        e["dv_available_low_m_s"] = u["engines"][eid]["dv_available_low_m_s"]
    # views.status built the forecast before any low bound existed: rebuild it now that they do, so the
    # low-bound run-out date sits beside the nominal one (issue 11, point 5).
    data["forecast"] = forecast(snap, data)
    verdicts = {}
    for row in data["pending_plans"]:
        a = u["approvals"][str(row["id"])]
        row["approval"] = a["approval"]
        row["approvals_needed"] = a.get("approvals_needed", 1)
        row["approvals_counted"] = a.get("approvals_counted", int(a["approval"] == "approved"))
        if a["approval"] != "none":
            row["approval_detail"] = {k: v for k, v in a.items() if k not in (
                "approval", "verdict_now", "approvals_needed", "approvals_counted")}
        if a.get("verdict_now"):
            row["verdict_now"] = verdicts[str(row["id"])] = a["verdict_now"]
    data["warnings"] = combined(data["warnings"], data["pending_plans"], verdicts)
    for row, low in zip(data.get("mixture_outage", []), u.get("mixture_outage", [])):
        row.update({k: v for k, v in low.items() if k != "tanks"})
    data["uncertainty"] = {"samples": u["samples"], "seed": u["seed"], "segments": u["segments"],
                           "reserves_probability": u["reserves_probability"], "mass_low_kg": u["mass_kg"]["low"],
                           "mass_sd_kg": u["mass_kg"]["sd"]}
    return data


__all__ = ["confidence_status", "confidence_check", "status_with_confidence", "plan_check", "approvals",
           "commitments", "validate", "run"]
