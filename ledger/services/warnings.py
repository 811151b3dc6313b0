"""The one list of warnings: what the replay found, plus every pending plan whose check now fails.

The console's watch list and alerts, `status` (text and JSON) and the handover all take their warnings from
here, so a plan that fails its check at the ledger's confidence is a warning everywhere or nowhere.
"""
from __future__ import annotations

from typing import Any, Iterable, Mapping, Sequence

FLAGGED = ("infeasible", "marginal")
"""Verdicts that make a pending plan a warning: infeasible (reserves broken even at nominal values) and
marginal (intact at nominal values only, not at the confidence asked)."""


def plan_warning(plan: Mapping[str, Any], verdict: Mapping[str, Any]) -> str | None:
    """'plan #715 nsk 1.70 m/s checks MARGINAL now at 99 %: ...' or None when the plan checks feasible."""
    word = verdict.get("verdict")
    if word not in FLAGGED:
        return None
    conf = verdict.get("confidence")
    at = f" at {100 * float(conf):g} %" if conf is not None else ""
    why = verdict.get("reason") or ("reserves intact at nominal values only" if word == "marginal" else "")
    return (f"plan #{plan['id']} {plan.get('engine', '?')} {float(plan.get('dv_m_s', 0.0)):.2f} m/s checks "
            f"{word.upper()} now{at}" + (f": {why}" if why else ""))


def plan_warnings(pending: Iterable[Mapping[str, Any]], verdicts: Mapping[str, Mapping[str, Any]]) -> list[str]:
    """Warnings for the pending plans whose current check (``verdicts``: plan id as text -> check) fails."""
    out = []
    for p in pending:
        v = verdicts.get(str(p["id"]))
        w = plan_warning(p, v) if v else None
        if w:
            out.append(w)
    return out


def combined(replay_warnings: Iterable[str], pending: Iterable[Mapping[str, Any]],
             verdicts: Mapping[str, Mapping[str, Any]]) -> list[str]:
    """Replay warnings first, then the failing plans; nothing twice."""
    out: list[str] = []
    for w in list(replay_warnings) + plan_warnings(pending, verdicts):
        if w not in out:
            out.append(w)
    return out


LIFE_WARN_SHARE = 0.8
"""Share of a qualified thruster life limit at which a warning is raised (80 %: a project choice; warning
ahead of a consumable life limit is common practice)."""
LIFE_LABEL = {"pulses": "pulses", "throughput_kg": "throughput", "on_time_s": "on-time"}


def life_warnings(rows: Sequence[Mapping[str, Any]], share: float = LIFE_WARN_SHARE) -> list[str]:
    """'engine rcs: 82 % of its qualified pulses used (246,000 of 300,000)' for every limit at or past
    ``share``."""
    out = []
    for r in rows:
        for key, used in r.get("life_used", {}).items():
            if used >= share:
                limit = r["life"][key]
                value = r["pulses"] if key == "pulses" else r[key]
                shown = {"pulses": f"{value:,.0f} of {limit:,.0f}",
                         "throughput_kg": f"{value:,.3f} kg of {limit:,.3f} kg",
                         "on_time_s": f"{value:,.1f} s of {limit:,.1f} s"}[key]
                past = " (past the limit)" if used > 1 else ""
                out.append(f"engine {r['engine']}: {100 * used:.0f} % of its qualified {LIFE_LABEL[key]} "
                           f"used ({shown}){past}")
    return out


__all__ = ["LIFE_WARN_SHARE", "life_warnings", "FLAGGED", "plan_warning", "plan_warnings", "combined"]
