"""The fields of gauge, re-baseline, approval, rejection and handover entries as labelled lines.

Stored values are SI; they are shown as an engineer reads them (bar, degC, kg with their sigma), with
the raw SI figure kept where a conversion could hide a typo. Other kinds keep the generic listing.
"""
from __future__ import annotations

from typing import Any, Mapping

from ...services.probtext import prob_text
from .. import fmt

Line = tuple[str, str, str]  # label, value, style

FLAG_STYLE = "bold red"


def _pm(x: Any, s: Any, unit: str = "kg", digits: int = 3) -> str:
    if x is None:
        return ""
    return f"{float(x):,.{digits}f} ± {float(s or 0.0):,.{digits}f} {unit}"


def _g(x: Any) -> str:
    return f"{x:.6g}" if isinstance(x, float) else str(x)


SUFFIX_UNITS = (("_kg_m3", "kg/m³"), ("_m3", "m³"), ("_kg", "kg"), ("_pa", "Pa"), ("_k", "K"),
                ("_rel", "(relative)"), ("_s", "s"))


def named(key: str, value: Any) -> tuple[str, str]:
    """'liquid_density_kg_m3', 1008.07 -> ('liquid density', '1008.07 kg/m³'): the unit moves to the value."""
    for suffix, unit in SUFFIX_UNITS:
        if key.endswith(suffix):
            return key[: -len(suffix)].replace("_", " "), f"{_g(value)} {unit}"
    return key.replace("_", " "), _g(value)


def gauge_lines(d: Mapping[str, Any]) -> list[Line]:
    if d.get("phase") == "two-phase":
        return two_phase_lines(d)
    flagged = bool(d.get("flagged"))
    out: list[Line] = [
        ("tank", f"{d.get('tank')} ({d.get('fluid')})", ""),
        ("method", str(d.get("method")), ""),
        ("pressure", f"{d['pressure_pa'] / 1e5:.6g} bar ({d['pressure_pa']:,.0f} Pa) ± "
                     f"{d.get('pressure_sigma_pa', 0.0) / 1e5:.3g} bar", ""),
        ("temperature", f"{d['temperature_k'] - 273.15:.2f} degC ({d['temperature_k']:.2f} K) ± "
                        f"{d.get('temperature_sigma_k', 0.0):.3g} K", ""),
        ("gauged", _pm(d.get("propellant_kg"), d.get("sigma_kg")) + " (1σ)", "bold"),
        ("bookkeeping then", _pm(d.get("bookkeeping_kg"), d.get("bookkeeping_sigma_kg")), ""),
        ("difference", f"{d['difference_kg']:+,.3f} kg = {d['difference_sigma']:+.2f}σ of "
                       f"{d.get('combined_sigma_kg', 0.0):,.3f} kg", "bold"),
        ("verdict", f"⚠ BEYOND {d.get('limit_sigma', 3):g}σ: look for a leak, a sensor fault or a flow-model "
                    "error first" if flagged else f"✓ within {d.get('limit_sigma', 3):g}σ",
         FLAG_STYLE if flagged else "green"),
        ("would adopt", _pm(d.get("rebaseline_kg"), d.get("rebaseline_sigma_kg")) + " (inverse-variance)", ""),
    ]
    sig = d.get("sigmas") or {}
    if sig:
        out.append(("error model (1σ)", ", ".join(" ".join(named(k, v)) for k, v in sig.items()), "grey70"))
    for k, v in (d.get("details") or {}).items():
        label, value = named(k, v)
        out.append((f"  {label}", value, "grey70"))
    return out


def rebaseline_lines(d: Mapping[str, Any]) -> list[Line]:
    return [
        ("tank", str(d.get("tank")), ""),
        ("adopts reading", f"#{d.get('gauge')}", ""),
        ("adopted value", _pm(d.get("remaining_kg"), d.get("sigma_kg")), "bold"),
        ("gauged", _pm(d.get("gauge_kg"), d.get("gauge_sigma_kg")), ""),
        ("bookkeeping then", _pm(d.get("bookkeeping_kg"), d.get("bookkeeping_sigma_kg")), ""),
        ("difference", f"{float(d.get('difference_sigma', 0.0)):+.2f}σ", ""),
        ("forced", "yes: adopted beyond 3σ" if d.get("forced") else "no", FLAG_STYLE if d.get("forced") else ""),
        ("reason", str(d.get("reason") or ""), ""),
    ]


def _tank_lines(c: Mapping[str, Any]) -> list[Line]:
    """Limiting tank (runs out first) and least margin tank. A check stored before the two were told apart
    has no ``least_margin_tank``: its ``limiting_tank`` then meant the least margin after reserves."""
    if "least_margin_tank" not in c:
        return [("least margin tank", f"{c.get('limiting_tank') or '-'} (least margin after reserves)", "")]
    return [("limiting tank", f"{c.get('limiting_tank') or '-'} (runs out first)", ""),
            ("least margin tank", f"{c.get('least_margin_tank') or '-'} (least margin after reserves)", "")]


def decision_lines(d: Mapping[str, Any], approval_now: str | None = None) -> list[Line]:
    c = d.get("check") or {}
    head = d.get("head") or {}
    ok = c.get("verdict") == "feasible"
    out: list[Line] = [
        ("plan", f"#{d.get('plan')}  {c.get('engine', '')} {float(c.get('dv_m_s', 0.0)):,.3f} m/s", "bold"),
        ("check then", f"{c.get('verdict', '?').upper()}", "green" if ok else FLAG_STYLE),
        ("probability", f"{prob_text(float(c.get('probability', 0.0)), c.get('samples'), prefix='')} that "
                        f"all reserves stay intact (confidence {float(c.get('confidence', 0.0)):g})", ""),
        ("dv free after", f"{float(c.get('dv_free_after_m_s', 0.0)):,.2f} m/s (low "
                          f"{float(c.get('dv_free_after_low_m_s') or 0.0):,.2f})", ""),
        *_tank_lines(c),
        ("plans flown first", str(c.get("commitments", 0)), ""),
        ("samples", f"{c.get('samples', '?')} (seed {c.get('seed', '?')})", "grey70"),
        ("check reason", str(c.get("reason") or ""), "grey70"),
        ("ledger head seen", f"#{head.get('seq')} {str(head.get('hash', ''))[:24]}…", "grey70"),
    ]
    if approval_now:
        sym, words, style = fmt.approval_tag(approval_now)
        out.insert(1, ("plan's state now", f"{sym} {words}", style))
    return out


def handover_lines(d: Mapping[str, Any]) -> list[Line]:
    return [
        ("from", str(d.get("from")), "bold"),
        ("to", str(d.get("to")), "bold"),
        ("window start", fmt.when_t(float(d["window_start"])) + " UTC" if d.get("window_start") is not None else "", ""),
        ("window end", fmt.when_t(float(d["window_end"])) + " UTC" if d.get("window_end") is not None else "", ""),
    ]


def data_lines(kind: str, data: Mapping[str, Any], approval_now: str | None = None) -> list[Line] | None:
    """Lines for the kinds shown field by field; None for the others (listed generically)."""
    try:
        if kind == "gauge":
            return gauge_lines(data)
        if kind == "rebaseline":
            return rebaseline_lines(data)
        if kind in ("approve", "reject"):
            return decision_lines(data, approval_now)
        if kind == "handover":
            return handover_lines(data)
    except (KeyError, TypeError, ValueError):
        return None  # an unexpected shape: the generic listing shows every stored field
    return None


def two_phase_lines(d: Mapping[str, Any]) -> list[Line]:
    """A reading on the saturation line: a range, no estimate, nothing a re-baseline could adopt."""
    inside = bool(d.get("bookkeeping_in_range"))
    return [
        ("tank", f"{d.get('tank')} ({d.get('fluid')})", ""),
        ("method", f"{d.get('method')}, two-phase", ""),
        ("pressure", f"{d['pressure_pa'] / 1e5:.6g} bar ± {d.get('pressure_sigma_pa', 0.0) / 1e5:.3g} bar", ""),
        ("temperature", f"{d['temperature_k'] - 273.15:.2f} degC ({d['temperature_k']:.2f} K) ± "
                        f"{d.get('temperature_sigma_k', 0.0):.3g} K", ""),
        ("gauged", f"any mass from {d['min_kg']:,.3f} to {d['max_kg']:,.3f} kg (vapour to liquid)", "bold"),
        ("bookkeeping then", _pm(d.get("bookkeeping_kg"), d.get("bookkeeping_sigma_kg"))
         + (", inside the range" if inside else ", OUTSIDE the range"), "" if inside else FLAG_STYLE),
        ("re-baseline", str(d.get("rebaseline_refused", "refused: two-phase")), ""),
    ]
