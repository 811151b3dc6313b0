"""Bundled scenarios: a craft file with a ``history`` list, loaded into a fresh ledger in one write.

History items use the command line's vocabulary (kind, at, engine, dv/duration/propellant or
pulses/on_time, delta, plan, by, note); ``ref`` names a plan so later items can refer to it, and ``repeat``/``every`` expand one item
into many evenly spaced entries (thousands of short thruster firings).
"""
from __future__ import annotations

import os
from typing import Any

from ..core.entries import BURN, HANDOVER, MASS, PLAN, USE, WITHDRAW, resolve
from ..errors import InputError
from ..units import parse_quantity
from .craftfile import craft_from_document, load_yaml
from .ledger import Ledger, create
from .records import entry_from_record, make_record, validate_data
from .timefmt import parse_time

SCENARIO_DIR = os.path.join(os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))), "scenarios")
DIMENSION = {"dv": "speed", "duration": "time", "propellant": "mass"}


def bundled() -> dict[str, str]:
    """Scenario name -> path of the YAML files shipped in ``scenarios/``."""
    if not os.path.isdir(SCENARIO_DIR):
        return {}
    return {f[:-5]: os.path.join(SCENARIO_DIR, f) for f in sorted(os.listdir(SCENARIO_DIR)) if f.endswith(".yaml")}


FLEET_DIR = os.path.join(SCENARIO_DIR, "fleet")


def demo_fleet() -> dict[str, str]:
    """The demo fleet: every bundled scenario plus the craft in ``scenarios/fleet/`` (one with a warning,
    one with nothing to flag), name -> path."""
    found = dict(bundled())
    if os.path.isdir(FLEET_DIR):
        found.update({f[:-5]: os.path.join(FLEET_DIR, f) for f in sorted(os.listdir(FLEET_DIR)) if f.endswith(".yaml")})
    return found


def build_fleet(folder: str) -> list[str]:
    """One ledger per demo-fleet craft in ``folder`` (``NAME.json``); returns their paths."""
    paths = []
    for name, path in demo_fleet().items():
        paths.append(os.path.join(folder, f"{name}.json"))
        build(path, paths[-1])
    return paths


def _item_data(item: dict[str, Any], where: str, refs: dict[str, int]) -> dict[str, Any]:
    data: dict[str, Any] = {}
    if "engine" in item:
        data["engine"] = str(item["engine"])
    for key, dim in DIMENSION.items():
        if item.get(key) is not None:
            data[key] = parse_quantity(item[key], dim, f"{where}.{key}")
    if item.get("pulses") is not None or item.get("on_time") is not None:  # a pulse train (services.pulses)
        data["pulses"] = item.get("pulses")
        data["on_time"] = None if item.get("on_time") is None else parse_quantity(item["on_time"], "time",
                                                                                   f"{where}.on_time")
    if item.get("delta") is not None:
        data["delta"] = parse_quantity(item["delta"], "mass", f"{where}.delta", signed=True)
    if item.get("plan") is not None:
        ref = str(item["plan"])
        if ref not in refs:
            raise InputError(f"{where}.plan: no earlier plan with ref '{ref}'")
        data["plan"] = refs[ref]
    return data


def load_history(doc: dict[str, Any], src: str, craft) -> list[dict[str, Any]]:
    """Validated entry records for the scenario's history, in the order given."""
    records: list[dict[str, Any]] = []
    entries = []
    refs: dict[str, int] = {}
    last_handover = parse_time(doc["history"][0]["at"], f"{src}: history[0].at") if doc.get("history") else 0.0
    for i, item in enumerate(doc.get("history") or []):
        where = f"{src}: history[{i}]"
        if not isinstance(item, dict) or item.get("kind") not in (BURN, PLAN, MASS, USE, WITHDRAW, HANDOVER):
            raise InputError(f"{where}: expected a mapping with kind burn, plan, mass, use, withdraw or handover")
        kind = item["kind"]
        at = parse_time(item.get("at", "now"), f"{where}.at")
        if kind == HANDOVER:
            # A past shift change, so the demo's next handover covers one shift, not the whole history.
            start = parse_time(item["since"], f"{where}.since") if item.get("since") else last_handover
            data = {"from": item.get("from"), "to": item.get("to"), "window_start": start, "window_end": at}
            last_handover = at
        else:
            data = _item_data(item, where, refs)
        repeat = int(item.get("repeat", 1))
        every = parse_quantity(item["every"], "time", f"{where}.every") if repeat > 1 else 0.0
        for k in range(repeat):
            resolved = resolve(entries) if kind in (BURN, WITHDRAW) and "plan" in data else None
            payload = validate_data(craft, resolved, kind, data) if resolved else _check(craft, kind, data, where)
            rec = make_record(kind, at + k * every, at + k * every, item.get("by", "demo"), item.get("note"), payload)
            rec["seq"] = len(records) + 1
            entries.append(entry_from_record(rec))
            del rec["seq"]
            records.append(rec)
        if kind == PLAN and item.get("ref") is not None:
            refs[str(item["ref"])] = len(records)
    return records


def _check(craft, kind, data, where):
    try:
        return validate_data(craft, resolve([]), kind, data)
    except InputError as exc:
        raise InputError(f"{where}: {exc}") from None


def build(scenario_path: str, ledger_path: str) -> Ledger:
    """Create a ledger at ``ledger_path`` from a scenario file (never modifies the scenario)."""
    doc = load_yaml(scenario_path)
    craft = craft_from_document(doc, scenario_path, extra_top=("history",))
    records = load_history(doc, scenario_path, craft)
    create(ledger_path, craft, by="demo")
    ledger = Ledger(ledger_path)
    if records:
        ledger.file.append_many(records)
    return ledger
