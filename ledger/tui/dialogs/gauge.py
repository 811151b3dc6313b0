"""Gauge a tank (preview, then record) and re-baseline a tank from a stored reading.

The estimate needs CoolProp and a Monte Carlo over the sensor errors (a second or two), so both the
preview and the recording run in a worker; the property library loads only then, never at start-up.
The first ctrl+s previews; a second one, with nothing changed, records exactly what was previewed
(same time, same figures); any edit in between asks for a new preview.
"""
from __future__ import annotations

from typing import Any

from rich.text import Text
from textual.app import ComposeResult
from textual.widgets import Static

from ...core.entries import GAUGE, REBASELINE
from ...errors import LedgerError
from ...services import gauging
from ...services.timefmt import now, parse_time
from .. import fmt
from . import fields
from .base import LATER, Field, FormDialog, text_field
from .entries import WHEN_HINT, common_tail


def tank_options(snap) -> list[tuple[str, str]]:
    out = []
    for t in snap.craft.tanks:
        try:
            how = gauging.method_for(t)
        except LedgerError as exc:
            how = _not_gaugeable(t, str(exc))
        out.append((f"{t.id}  {t.fluid}, {how}", t.id))
    return out


def _not_gaugeable(tank, problem: str) -> str:
    """Names exactly what the craft file lacks: a gas-stored tank needs only its volume, a blowdown
    tank its volume and its pressurant loading."""
    needs = (("volume", tank.volume_m3),) + (() if "gas-stored" in problem else (("pressurant", tank.pressurant),))
    missing = [name for name, value in needs if value is None]
    if missing:
        return f"cannot be gauged: the craft file gives no {' and no '.join(missing)}"
    return f"cannot be gauged: {problem}"


PREVIEW_FOOT = "preview: nothing recorded yet · ctrl+s records this reading"


def reading_text(r: dict[str, Any], foot: str = PREVIEW_FOOT) -> Text:
    """The estimate against the bookkeeping at the reading's time (the command line's figures, fewer lines)."""
    out = Text()
    out.append(f"◉ {r['tank']} ({r['fluid']}, {r['method']}) at {fmt.when(r['at'])} UTC\n", style="bold")
    out.append(f"reading {r['pressure_pa'] / 1e5:.6g} bar, {r['temperature_k'] - 273.15:.2f} degC "
               f"(± {r['pressure_sigma_pa'] / 1e5:.3g} bar, {r['temperature_sigma_k']:.3g} K)\n")
    if r.get("phase") == gauging.TWO_PHASE:
        return two_phase_text(out, r, foot)
    out.append("gauged ")
    out.append(f"{r['propellant_kg']:,.3f} ± {r['sigma_kg']:.3f} kg", style="bold")
    out.append(f" (1σ) · bookkeeping {r['bookkeeping_kg']:,.3f} ± {r['bookkeeping_sigma_kg']:.3f} kg\n")
    out.append(f"difference {r['difference_kg']:+,.3f} kg = ")
    out.append(f"{r['difference_sigma']:+.2f}σ", style="bold")
    if r["flagged"]:
        out.append("  ⚠ BEYOND 3σ", style="bold red")
        out.append(": look for a leak, a sensor fault or a flow-model error first\n")
    else:
        out.append("  ✓ within 3σ", style="green")
        out.append(f"\ncombined {r['rebaseline_kg']:,.3f} ± {r['rebaseline_sigma_kg']:.3f} kg (what a re-baseline "
                   "would adopt)\n")
    out.append(foot, style="italic")
    return out


def two_phase_text(out: Text, r: dict[str, Any], foot: str) -> Text:
    """A reading on the saturation line: the range, the bookkeeping against it, no estimate, no re-baseline."""
    d = r["details"]
    out.append("two-phase: ", style="bold yellow")
    out.append(f"any mass from {r['min_kg']:,.3f} kg (all vapour) to {r['max_kg']:,.3f} kg (all liquid)", style="bold")
    out.append(f"\nsaturation {d['saturation_pressure_pa'] / 1e5:.6g} bar here; reading "
               f"{d['pressure_from_saturation_sigma']:+.2f}σ from it: no point estimate\n")
    out.append(f"bookkeeping {r['bookkeeping_kg']:,.3f} ± {r['bookkeeping_sigma_kg']:.3f} kg ")
    out.append("inside the range" if r["bookkeeping_in_range"] else "⚠ OUTSIDE the range",
               style="green" if r["bookkeeping_in_range"] else "bold red")
    out.append(f"\nno re-baseline: {r['rebaseline_refused']}\n")
    out.append(foot, style="italic")
    return out


class GaugeForm(FormDialog):
    LONG = True
    TITLE = "◉ Gauge a tank from its pressure and temperature"
    HINT = "Units are required: '7.1 bar' or '0.71 MPa', '21 degC' or '294 K'. ctrl+s previews, again records."
    FOCUS = "pressure"
    OK_LABEL = "Preview  ctrl+s"

    def __init__(self, tank: str | None = None) -> None:
        self.start_tank = tank
        self.previewed: tuple[tuple, dict[str, Any]] | None = None
        super().__init__()

    def make_fields(self) -> list[Field]:
        snap = self.app.snap
        opts = tank_options(snap)
        first = next((tid for label, tid in opts if "cannot" not in label), snap.craft.tank_ids[0])
        return [
            Field("tank", "tank", options=opts, required=True, value=self.start_tank or first),
            Field("pressure", "pressure", lambda s: fields.quantity(s, "pressure", "pressure",
                                                                    unit_hint="e.g. 7.1 bar"),
                  "e.g. 7.1 bar", required=True),
            Field("temperature", "temperature", lambda s: fields.quantity(s, "temperature", "temperature",
                                                                          unit_hint="e.g. 21 degC"),
                  "e.g. 21 degC", required=True),
            Field("p_sigma", "pressure σ", lambda s: fields.quantity(s, "pressure", "pressure sigma", required=False,
                                                                     unit_hint="e.g. 0.1 bar"),
                  "blank = 0.5 % of an assumed full scale"),
            Field("t_sigma", "temperature σ", lambda s: fields.quantity(s, "temperature_difference",
                                                                        "temperature sigma", required=False,
                                                                        unit_hint="e.g. 0.5 K"),
                  "blank = 0.5 K"),
            Field("g_offset", "gas temp. σ", lambda s: fields.quantity(s, "temperature_difference",
                                                                       "gas temperature offset sigma",
                                                                       required=False, unit_hint="e.g. 1 K"),
                  "liquid tanks: pressurant vs wall sensor; blank = 1 K after a burn, else 0.5 K"),
            Field("at", "read at", fields.when, WHEN_HINT),
            *common_tail(),
        ]

    def compose_extra(self) -> ComposeResult:
        yield Static("", id="gauge-result")

    def field_changed(self, name: str) -> None:
        if self.previewed is not None:
            self.previewed = None
            self.query_one("#gauge-result", Static).update(Text("changed: ctrl+s previews again", style="italic"))
            self.query_one("#ok").label = self.OK_LABEL

    @staticmethod
    def _key(values: dict[str, Any]) -> tuple:
        return tuple(values.get(k) for k in ("tank", "pressure", "temperature", "p_sigma", "t_sigma", "g_offset",
                                             "at"))

    def commit(self, values: dict[str, Any]) -> Any:
        snap, live = self.app.snap, self.app.live
        tank = gauging.tank_of(snap, values["tank"])
        sigmas = gauging.default_sigmas(tank, values.get("p_sigma"), values.get("t_sigma"), values.get("g_offset"))
        key = self._key(values)
        if self.previewed is not None and self.previewed[0] == key:
            at = parse_time(self.previewed[1]["at"], "time")
            by, note = values.get("by") or None, values.get("note") or None

            def record(progress):
                return gauging.record_gauge(live, tank.id, values["pressure"], values["temperature"], sigmas,
                                            at=at, by=by, note=note)
            self.start_work(record, self._recorded, f"recording the {tank.id} reading", writes=True)
            return LATER
        at = values.get("at") or now()

        def preview(progress):
            return gauging.gauge_reading(snap, tank.id, values["pressure"], values["temperature"], sigmas, at=at)
        self.start_work(preview, lambda r: self._previewed(key, r),
                        f"estimating {tank.id} (real-gas properties, sensor errors)")
        return LATER

    def _previewed(self, key: tuple, reading: dict[str, Any]) -> None:
        self.previewed = (key, reading)
        self.query_one("#gauge-result", Static).update(reading_text(reading))
        self.query_one("#ok").label = "Record  ctrl+s"

    def _recorded(self, out: dict[str, Any]) -> None:
        self.app.recorded(out["id"], GAUGE, out["warnings"])
        self.dismiss(out)


def reading_options(snap) -> list[tuple[str, int]]:
    """Gauge readings no re-baseline has adopted yet, newest first."""
    adopted = {int(e.get("gauge")) for e in snap.resolved.events if e.kind == REBASELINE}
    out = []
    for e in reversed(snap.entries):
        if (e.kind == GAUGE and e.seq not in adopted and e.seq not in snap.resolved.superseded
                and e.data.get("phase") != gauging.TWO_PHASE):  # a range: nothing to adopt
            d = e.data
            out.append((f"#{e.seq} {d['tank']} {d['propellant_kg']:,.2f}±{d['sigma_kg']:,.2f} kg, "
                        f"{d['difference_sigma']:+.1f}σ, {fmt.when_t(e.at)}", e.seq))
    return out


class RebaselineForm(FormDialog):
    LONG = True
    TITLE = "≡ Re-baseline a tank from a gauge reading"
    HINT = ("A named person adopts the reading combined with the bookkeeping (inverse-variance) as the tank's "
            "value from the reading's time on. Beyond 3σ it is refused unless forced.")
    FOCUS = "by"

    def __init__(self, entry: int | None = None) -> None:
        self.start_entry = entry
        super().__init__()

    def make_fields(self) -> list[Field]:
        opts = reading_options(self.app.snap)
        ids = [seq for _, seq in opts]
        start = self.start_entry if self.start_entry in ids else (ids[0] if ids else None)
        return [
            Field("gauge", "gauge reading", options=opts, required=True, value=start),
            Field("by", "adopted by", lambda s: ((s or "").strip(), None if (s or "").strip() else
                                                  "required: the name of the person adopting the value"),
                  "a name", required=True),
            text_field("reason", "reason", "why the value is adopted"),
            Field("force", "beyond 3σ", options=[("refuse (investigate first)", "refuse"),
                                                ("adopt anyway (forced)", "force")], required=True, value="refuse"),
            text_field("note", "note", "free text"),
        ]

    def compose_extra(self) -> ComposeResult:
        yield Static("", id="gauge-result")

    def on_mount(self) -> None:
        super().on_mount()
        self.field_changed("gauge")

    def field_changed(self, name: str) -> None:
        if name != "gauge":
            return
        seq = self.raw("gauge")
        e = self.app.snap.resolved.effective.get(seq) if seq is not None else None
        box = self.query_one("#gauge-result", Static)
        if e is None:
            box.update("no gauge reading waiting to be adopted: record one with g" if seq is None else "")
            return
        box.update(reading_text({**e.data, "at": fmt.when_t(e.at)},
                                f"reading #{seq} as recorded; ctrl+s adopts it (with the bookkeeping as it now "
                                "stands at the reading's time)"))

    def commit(self, values: dict[str, Any]) -> Any:
        e = self.app.snap.resolved.effective.get(values["gauge"])
        tank, live = e.data["tank"], self.app.live
        args = dict(reason=values.get("reason") or None, force=values.get("force") == "force",
                    note=values.get("note") or None)

        def record(progress):
            return gauging.record_rebaseline(live, tank, values["gauge"], values["by"], **args)
        self.start_work(record, self._recorded, f"re-baselining {tank}", writes=True)
        return LATER

    def _recorded(self, out: dict[str, Any]) -> None:
        self.app.notify(f"tank {out['tank']} is {out['remaining_kg']:.3f} ± {out['sigma_kg']:.3f} kg from "
                        f"{fmt.when(out['at'])} (change {out['change_kg']:+.3f} kg); {out['remaining_now_kg']:.3f} "
                        "kg now", timeout=10)
        self.app.recorded(out["id"], REBASELINE, out["warnings"])
        self.dismiss(out)
