"""Thruster firings from a telemetry CSV: rows of (time, thruster, on-time[, pulses]) summed per engine
and per pass, per orbit or not at all, each group one ``use`` entry with its total on-time.

Column names, the on-time unit, the pass gap and the orbit period come from the craft file's
``import: firings`` section (services.importconfig). The ledger's ``use`` has no pulse field: the pulse
count is kept in the entry's import source.
"""
from __future__ import annotations

import csv
import io
import math
import re
from dataclasses import dataclass
from typing import Any, Callable

from ..core.entries import USE
from ..errors import InputError
from .imports import Candidate, Read, base_source, read_bytes, text_of
from .importconfig import COLUMNS, DEFAULT_PASS_GAP_S, engine_for
from .timefmt import iso, parse_time

GROUPS = ("pass", "orbit", "none")
REQUIRED = ("time", "thruster", "on_time")
_BARE = re.compile(r"^\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*$")


@dataclass(frozen=True)
class Firing:
    line: int
    at: float
    engine: str
    thruster: str
    on_time_s: float
    pulses: int | None


def _on_time(text: str, unit_s: float, where: str) -> float:
    if _BARE.match(text):
        value = float(text) * unit_s
    else:  # the cell carries its own unit, e.g. '35 ms'
        from ..units import parse_quantity  # noqa: PLC0415

        value = parse_quantity(text, "time", where)
    if not math.isfinite(value) or value < 0:
        raise InputError(f"{where}: on-time {text!r}; expected a time of zero or more")
    return value


def read_firings(path: str, text: str, config: dict, engines: list[str]) -> list[Firing]:
    """The rows as firings in SI, in file order; InputError naming file, line and column otherwise."""
    conf = (config or {}).get("firings") or {}
    names = {k: conf.get("columns", {}).get(k, k) for k in COLUMNS}
    unit_s = float(conf.get("on_time_unit_s", 1.0))
    rows = csv.reader(io.StringIO(text))
    try:
        header = [h.strip() for h in next(rows)]
    except StopIteration:
        raise InputError(f"{path}: empty; expected a header row with {', '.join(names[k] for k in REQUIRED)}") from None
    except csv.Error as exc:
        raise InputError(f"{path} line 1: not CSV ({exc})") from None
    col = {}
    for k in COLUMNS:
        if names[k] in header:
            col[k] = header.index(names[k])
        elif k in REQUIRED:
            raise InputError(f"{path} line 1: no column '{names[k]}' (the {k.replace('_', '-')} column; header has "
                             f"{', '.join(header) or 'nothing'}); expected columns "
                             f"{', '.join(names[r] for r in REQUIRED)} (names set in import.firings.columns)")
    out = []
    try:
        for row in rows:
            line = rows.line_num
            if not row or all(not c.strip() for c in row):
                continue
            if len(row) < len(header):
                raise InputError(f"{path} line {line}: {len(row)} cells for {len(header)} columns; expected one per column")
            cell = {k: row[i].strip() for k, i in col.items()}
            where = f"{path} line {line}"
            at = parse_time(cell["time"], f"{where}: {names['time']}")
            thruster = cell["thruster"]
            engine = engine_for(config, engines, thruster, f"{where}: {names['thruster']}")
            on = _on_time(cell["on_time"], unit_s, f"{where}: {names['on_time']}")
            pulses = None
            if "pulses" in col and cell["pulses"] != "":
                try:
                    pulses = int(cell["pulses"])
                except ValueError:
                    raise InputError(f"{where}: {names['pulses']} = {cell['pulses']!r}; expected a whole number") from None
                if pulses < 0:
                    raise InputError(f"{where}: {names['pulses']} = {pulses}; expected zero or more")
            out.append(Firing(line, at, engine, thruster, on, pulses))
    except csv.Error as exc:
        raise InputError(f"{path} line {rows.line_num}: not CSV ({exc})") from None
    if not out:
        raise InputError(f"{path}: no firings after the header; expected one row per firing")
    return out


def group(firings: list[Firing], how: str, config: dict, path: str) -> list[tuple[str, str, list[Firing]]]:
    """(engine, group label, firings) in time order: per pass (quiet gap), per orbit or one per row."""
    conf = (config or {}).get("firings") or {}
    ordered = sorted(firings, key=lambda f: (f.at, f.line))
    labels: list[str] = []
    if how == "pass":
        gap = float(conf.get("pass_gap_s", DEFAULT_PASS_GAP_S))
        start, last = None, None
        for f in ordered:
            if last is None or f.at - last > gap:
                start = f.at
            last = f.at + f.on_time_s
            labels.append(f"pass {iso(start)}")
    elif how == "orbit":
        period = conf.get("orbit_period_s")
        if not period:
            raise InputError(f"{path}: --group orbit needs import.firings.orbit_period in the craft file "
                             "(e.g. orbit_period: 98.6 min)")
        t0 = float(conf.get("orbit_epoch", ordered[0].at))
        for f in ordered:
            k = math.floor((f.at - t0) / float(period))
            labels.append(f"orbit {k} from {iso(t0 + k * float(period))}")
    elif how == "none":
        labels = [f"row {f.line}" for f in ordered]
    else:
        raise InputError(f"--group: expected one of {', '.join(GROUPS)}, got {how!r}")
    groups: dict[tuple[str, str], list[Firing]] = {}
    for f, label in zip(ordered, labels):
        groups.setdefault((f.engine, label), []).append(f)
    return [(eng, label, fs) for (eng, label), fs in groups.items()]


def _rows(fs: list[Firing]) -> str:
    lines = sorted(f.line for f in fs)
    return f"{lines[0]}-{lines[-1]}" if len(lines) > 1 else str(lines[0])


def candidates(path: str, sha: str, firings: list[Firing], how: str, config: dict) -> list[Candidate]:
    out = []
    for engine, label, fs in group(firings, how, config, path):
        total = sum(f.on_time_s for f in fs)
        source: dict[str, Any] = base_source(path, sha, "firings", None, None)
        source.update(rows=_rows(fs), row_count=len(fs), group=label, thrusters=sorted({f.thruster for f in fs}),
                      key=[USE, engine, label])
        counted = [f.pulses for f in fs if f.pulses is not None]
        data: dict[str, Any] = {"engine": engine, "duration": total}
        if counted:
            source["pulses"] = int(sum(counted))
        if len(counted) == len(fs) and sum(counted) > 0:  # every row counted its pulses: a pulse train
            n = int(sum(counted))   # (pulse-mode Isp, counted in the thruster's qualified pulses)
            data.update(pulses=n, on_time=total / n, duration=n * (total / n))
        out.append(Candidate(USE, fs[0].at, data, source,
                             f"{engine} {label}, rows {source['rows']}"))
    return out


def reader(path: str, how: str = "pass", *, config: dict | None = None) -> Callable[[Any], Read]:
    def read(snap) -> Read:
        raw, sha = read_bytes(path)
        text = text_of(path, raw)
        conf = config if config is not None else (snap.craft.extra.get("import") or {})
        firings = read_firings(path, text, conf, snap.craft.engine_ids)
        return Read(path, sha, "firings", candidates(path, sha, firings, how, conf))

    return read
