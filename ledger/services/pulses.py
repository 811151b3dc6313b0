"""Pulse-mode firings: the pulse-train amount of ``burn``/``use``, and per-thruster totals against life.

A pulse train is N pulses of on-time T each (T is the commanded valve-open time per pulse). It is
stored as ``pulses`` = N, ``on_time`` = T and ``duration`` = N x T, so the replay, the Monte Carlo and
the bookkeeping sigma treat it as a timed firing of total on-time N x T at the engine's mass flow;
the pulse-mode Isp only changes the delta-v the train delivers (core.replay).

Per-thruster totals count what each engine has done over the whole ledger: on-time (recorded for timed
and pulse firings; for a firing given by delta-v or propellant, the steady-state equivalent drawn/mass
flow), pulses (from pulse trains only) and throughput (kg drawn, from the replay). They are compared
with the engine's ``life:`` limits from the craft file; at ``LIFE_WARN_SHARE`` of any limit the one
warning list (services.warnings) carries a warning.
"""
from __future__ import annotations

import math
from typing import Any, Mapping, Sequence

import numpy as np

from ..errors import InputError
from .warnings import LIFE_WARN_SHARE, life_warnings  # noqa: F401 - the one warning list words them


def parse_count(text: Any, where: str = "--pulses") -> int | None:
    """A whole number of pulses from the command line or a form; None when not given."""
    if text is None:
        return None
    if isinstance(text, bool):
        raise InputError(f"{where}: expected a whole number of pulses such as 120, got {text!r}")
    if isinstance(text, int):
        return text
    raw = str(text).strip().replace("_", "")
    if not raw.lstrip("+-").isdigit():
        raise InputError(f"{where}: expected a whole number of pulses such as 120, got {str(text)!r}")
    return int(raw)


def pulse_train(pulses: Any, on_time: Any) -> dict[str, Any]:
    """Validated SI payload of a pulse train: pulses (int), on_time (s per pulse), duration (total s)."""
    if pulses is None:
        raise InputError("--on-time: only with --pulses (the on-time of each pulse of a pulse train)")
    count = parse_count(pulses)
    if count <= 0:
        raise InputError(f"--pulses: must be at least 1 pulse, got {count}")
    if count >= 2**53:
        raise InputError(f"--pulses: {count} is out of range")
    if on_time is None:
        raise InputError("--pulses: give the on-time of each pulse with --on-time, e.g. '50 ms'")
    if isinstance(on_time, bool) or not isinstance(on_time, (int, float)) or not math.isfinite(on_time):
        raise InputError(f"--on-time: expected a finite time per pulse, got {on_time!r}")
    if on_time <= 0:
        raise InputError("--on-time: must be greater than zero (the on-time of each pulse)")
    return {"pulses": count, "on_time": float(on_time), "duration": count * float(on_time)}


def train_text(data: Mapping[str, Any]) -> str:
    """'1200 x 0.050 s pulses (60.000 s)' for a pulse train's amount column."""
    return f"{int(data['pulses'])} x {data['on_time']:.3f} s pulses ({data['duration']:.3f} s)"


_LAST: list = [None]
"""The last (craft, events, replay, rows): a snapshot's warnings and its status ask for the same totals."""


def totals(craft, events: Sequence, rep) -> list[dict[str, Any]]:
    """Per engine: on_time_s, pulses, throughput_kg, and against each given life limit its share used.

    ``events`` are the resolved events and ``rep`` their replay (services.ledger.Snapshot). The same three
    objects asked again (the warnings, then ``status``) get a copy of the last answer: about 20 ms at 20k
    entries saved."""
    last = _LAST[0]
    if last is not None and last[0] is craft and last[1] is events and last[2] is rep:
        return [dict(row, life=dict(row["life"]), life_used=dict(row["life_used"])) for row in last[3]]
    out = _totals(craft, events, rep)
    _LAST[0] = (craft, events, rep, [dict(row, life=dict(row["life"]), life_used=dict(row["life_used"])) for row in out])
    return out


def _totals(craft, events: Sequence, rep) -> list[dict[str, Any]]:
    n_eng, n = len(craft.engines), len(events)
    index = {e.id: i for i, e in enumerate(craft.engines)}
    datas = [ev.data for ev in events]
    engine = np.fromiter((index.get(d.get("engine"), -1) if ev.kind in ("burn", "use") else -1
                          for ev, d in zip(events, datas)), dtype=np.int64, count=n)
    fired = engine >= 0
    eng = engine[fired]

    def column(key: str) -> np.ndarray:
        return np.fromiter((math.nan if (v := d.get(key)) is None else v for d in datas), dtype=float, count=n)[fired]

    drawn = np.asarray(rep.propellant[:n], dtype=float)[fired]
    duration, dv, count = column("duration"), column("dv"), column("pulses")
    flows = craft.mass_flows()
    timed = ~np.isnan(duration) & np.isnan(dv)
    seconds = np.where(timed, np.nan_to_num(duration), np.divide(drawn, flows[eng], out=np.zeros_like(drawn),
                                                                  where=flows[eng] > 0))
    on_time = np.bincount(eng, seconds, minlength=n_eng)
    pulses = np.bincount(eng, np.nan_to_num(count), minlength=n_eng)
    through = np.bincount(eng, drawn, minlength=n_eng)
    out = []
    for k, eng in enumerate(craft.engines):
        used = {"pulses": float(pulses[k]), "throughput_kg": float(through[k]), "on_time_s": float(on_time[k])}
        life = dict(eng.life or {})
        share = {key: used[key] / limit for key, limit in life.items() if limit > 0}
        out.append({"engine": eng.id, "on_time_s": used["on_time_s"], "pulses": int(pulses[k]),
                    "throughput_kg": used["throughput_kg"], "life": life, "life_used": share})
    return out


def impulse_bit_warnings(craft, events: Sequence) -> list[str]:
    """'entry #12 (engine acs): on-time 5.000 ms per pulse outside its impulse-bit table (10.000 to 100.000 ms);
    end value used' for every pulse train whose on-time lies outside its engine's table (the performance
    tables' rule: the end value, and a warning on every entry that falls there)."""
    out = []
    bits = {e.id: e.impulse_bit for e in craft.engines if e.impulse_bit is not None}
    for ev in events:
        d = ev.data
        ib = bits.get(d.get("engine")) if d.get("pulses") is not None else None
        if ib is not None and ib.outside(float(d["on_time"])):
            out.append(f"entry #{ev.seq} (engine {d['engine']}): on-time {1000 * float(d['on_time']):,.3f} ms per "
                       f"pulse outside its impulse-bit table ({1000 * ib.on_time_s[0]:,.3f} to "
                       f"{1000 * ib.on_time_s[-1]:,.3f} ms); end value used")
    return out


__all__ = ["LIFE_WARN_SHARE", "parse_count", "pulse_train", "train_text", "totals", "life_warnings",
           "impulse_bit_warnings"]
