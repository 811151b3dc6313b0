"""Reading a craft file (YAML, safe loading) into a validated ``Craft``.

The fields in the README are a contract users' files rely on; anything wrong is one line naming the
file, the field and what was expected. Optional fields (volumes, pressurant, sigmas, routine operations)
are checked the same way when present.
"""
from __future__ import annotations

import math
from dataclasses import replace
from typing import Any, Mapping

import numpy as np

import yaml

from ..core.craft import Craft, Engine, ImpulseBit, Performance, Pressurant, Reserve, Routine, Tank
from ..core.fluids import is_gas_name
from ..errors import InputError
from ..units import parse_quantity


MAX_BYTES = 1 << 20
"""A craft file is a few kilobytes; a megabyte is far beyond any real one and bounds the parser's work."""
MAX_NODES = 20_000
MAX_DEPTH = 32
"""Bounds on the document as aliases would expand it: a nine-level alias 'bomb' of 517 bytes expands to
billions of nodes; a real craft file has a few hundred at depth four or five."""
QUOTE_CHARS = 80


def shown(value: Any) -> str:
    """A value for an error message: its repr, built with bounded work and cut to about 80 characters."""
    import reprlib  # noqa: PLC0415

    r = reprlib.Repr()
    r.maxstring = r.maxother = QUOTE_CHARS
    r.maxlevel, r.maxlist, r.maxdict = 2, 6, 6
    text = r.repr(value)
    return text if len(text) <= QUOTE_CHARS else text[:QUOTE_CHARS - 3] + "..."


class _BoundedLoader(yaml.SafeLoader):
    """Safe loading that refuses a document whose aliases would expand it beyond MAX_NODES or MAX_DEPTH,
    measured on the node graph before anything is constructed (each shared node counted once per use)."""

    def get_single_node(self):
        node = super().get_single_node()
        if node is not None:
            _measure(node)
        return node


def _measure(root) -> None:
    sizes: dict[int, tuple[int, int]] = {}

    def walk(node, depth: int) -> tuple[int, int]:
        if depth > MAX_DEPTH:
            raise InputError(f"nested deeper than {MAX_DEPTH} levels")
        known = sizes.get(id(node))
        if known is not None:
            return known
        total, deepest = 1, 1
        if isinstance(node, yaml.SequenceNode):
            children = node.value
        elif isinstance(node, yaml.MappingNode):
            children = [x for pair in node.value for x in pair]
        else:
            children = []
        for child in children:
            n, d = walk(child, depth + 1)
            total, deepest = total + n, max(deepest, d + 1)
            if total > MAX_NODES:
                raise InputError(f"expands to more than {MAX_NODES:,} values (aliases counted as expanded)")
        sizes[id(node)] = (total, deepest)
        return total, deepest

    walk(root, 0)


def load_yaml(path: str) -> Any:
    try:
        with open(path, "rb") as fh:
            raw = fh.read(MAX_BYTES + 1)
        if len(raw) > MAX_BYTES:
            raise InputError(f"{path!r}: larger than {MAX_BYTES // 1024} KiB; not a craft file")
        text = raw.decode("utf-8")
        return yaml.load(text, Loader=_BoundedLoader)  # noqa: S506 - a SafeLoader subclass
    except InputError as exc:
        msg = str(exc)
        raise InputError(msg if msg.startswith(repr(path)) else f"{path!r}: not a usable craft file: {msg}") from None
    except FileNotFoundError:
        raise InputError(f"{path}: no such file") from None
    except IsADirectoryError:
        raise InputError(f"{path}: is a folder, not a craft file") from None
    except OSError as exc:
        raise InputError(f"{path}: cannot read it ({exc.strerror or exc})") from None
    except UnicodeDecodeError:
        raise InputError(f"{path}: not a text file (expected YAML)") from None
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        where = f" at line {mark.line + 1}" if mark else ""
        raise InputError(f"{path}: not valid YAML{where}") from None
    except (ValueError, OverflowError, RecursionError) as exc:  # e.g. an integer too long to convert
        raise InputError(f"{path}: not a usable YAML document ({type(exc).__name__})") from None


class _Fields:
    """Reads one mapping of the craft file with errors that say where."""

    def __init__(self, src: str, node: Any, where: str):
        if not isinstance(node, Mapping):
            raise InputError(f"{src}: {where}: expected a mapping of fields, got {type(node).__name__}")
        self.src, self.node, self.where = src, node, where

    def at(self, key: str) -> str:
        return f"{self.src}: {self.where}.{key}" if self.where else f"{self.src}: {key}"

    def text(self, key: str) -> str:
        if key not in self.node:
            raise InputError(f"{self.at(key)}: missing (expected text)")
        value = self.node[key]
        if isinstance(value, bool) or not isinstance(value, (str, int, float)) or str(value).strip() == "":
            raise InputError(f"{self.at(key)}: expected non-empty text, got {shown(value)}")
        text = str(value).strip()
        if not text.isprintable() or len(text) > 200:
            raise InputError(f"{self.at(key)}: expected printable text of at most 200 characters (no control "
                             "characters or line breaks)")
        return text

    def qty(self, key: str, dimension: str, default: float | None = None, *, positive: bool = False,
            required: bool = True) -> float | None:
        if key not in self.node or self.node[key] is None:
            if default is not None or not required:
                return default
            raise InputError(f"{self.at(key)}: missing (expected a {dimension})")
        value = self.node[key]
        if isinstance(value, str) and len(value) > 200:
            raise InputError(f"{self.at(key)}: expected a {dimension} such as '12 kg', got {shown(value)}")
        if isinstance(value, int) and not isinstance(value, bool) and value.bit_length() > 1100:
            raise InputError(f"{self.at(key)}: {shown(value)} is not a finite {dimension}")
        return parse_quantity(value, dimension, self.at(key), positive=positive)


def _list(src: str, doc: Mapping, key: str, required: bool = True) -> list:
    value = doc.get(key)
    if value is None and not required:
        return []
    if not isinstance(value, list) or (required and not value):
        raise InputError(f"{src}: {key}: expected a non-empty list")
    return value


def _unique(src: str, kind: str, ids: list[str]) -> None:
    seen = set()
    for i in ids:
        if i in seen:
            raise InputError(f"{src}: {kind}: duplicate id '{i}'")
        seen.add(i)


def _mass_parts(value: Any) -> float | None:
    """A feed's share as a positive finite float, or None (a whole number too large for a float too)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return None
    try:
        share = float(value)
    except OverflowError:
        return None
    return share if math.isfinite(share) and share > 0 else None


def _ratio_sigma(value: Any, where: str) -> float:
    """A one-sigma mixture ratio (a plain number, mass parts per part) as a finite float >= 0."""
    try:
        ok = not isinstance(value, bool) and isinstance(value, (int, float)) and math.isfinite(float(value)) and value >= 0
    except OverflowError:  # a whole number too large for a float
        ok = False
    if not ok:
        raise InputError(f"{where}: expected a one-sigma mixture ratio such as 0.02 (a number >= 0), got {shown(value)}")
    return float(value)


def _mixture(f: _Fields, feeds: dict[str, float], feed_sigma: tuple[str, float] | None,
             engine_sigma: Any) -> tuple[dict[str, float], float | None]:
    """The engine's mixture-ratio sigma (first feed's parts over the second's). A sigma written on a feed
    puts that feed first, so the ratio is that feed over the other and its sigma is sigma/other parts."""
    if engine_sigma is None and feed_sigma is None:
        return feeds, None
    if len(feeds) != 2:
        raise InputError(f"{f.at('mixture_ratio_sigma')}: a mixture ratio needs exactly two feeds, "
                         f"this engine has {len(feeds)}")
    if engine_sigma is not None and feed_sigma is not None:
        raise InputError(f"{f.at('mixture_ratio_sigma')}: give the sigma on the engine or on one feed, not both")
    if engine_sigma is not None:
        return feeds, _ratio_sigma(engine_sigma, f.at("mixture_ratio_sigma"))
    tank_id, sigma = feed_sigma
    other = next(k for k in feeds if k != tank_id)
    return {tank_id: feeds[tank_id], other: feeds[other]}, sigma / feeds[other]


def craft_from_document(doc: Any, src: str, extra_top: tuple[str, ...] = ()) -> Craft:
    """The validated craft; ``extra_top`` names top-level keys another reader owns (a scenario's history)."""
    if not isinstance(doc, Mapping):
        raise InputError(f"{src}: expected a mapping with craft, tanks, engines (and reserves)")
    check_keys(src, doc, extra_top)
    head = _Fields(src, doc.get("craft"), "craft") if "craft" in doc else None
    if head is None:
        raise InputError(f"{src}: craft: missing (expected name and dry_mass)")
    name, dry_mass = head.text("name"), head.qty("dry_mass", "mass", positive=True)
    tanks = []
    for i, node in enumerate(_list(src, doc, "tanks")):
        f = _Fields(src, node, f"tanks[{i}]")
        pressurant = None
        if node.get("pressurant") is not None:
            p = _Fields(src, node["pressurant"], f"tanks[{i}].pressurant")
            pressurant = Pressurant(p.text("gas"), p.qty("pressure", "pressure", positive=True),
                                    p.qty("temperature", "temperature"))
        tank = Tank(id=f.text("id"), fluid=f.text("fluid"), load_kg=f.qty("load", "mass"),
                    residual_kg=f.qty("residual", "mass", 0.0),
                    volume_m3=f.qty("volume", "volume", required=False, positive=True), pressurant=pressurant,
                    load_sigma_kg=f.qty("load_sigma", "mass", required=False), expansion=_expansion(f))
        if tank.residual_kg > tank.load_kg:
            raise InputError(f"{f.at('residual')}: {tank.residual_kg:g} kg exceeds the load of {tank.load_kg:g} kg")
        tanks.append(tank)
    _unique(src, "tanks", [t.id for t in tanks])
    tank_ids = {t.id for t in tanks}
    engines = []
    for i, node in enumerate(_list(src, doc, "engines")):
        f = _Fields(src, node, f"engines[{i}]")
        feeds_node = node.get("feeds")
        if not isinstance(feeds_node, Mapping) or not feeds_node:
            raise InputError(f"{f.at('feeds')}: expected a mapping of tank id to mass parts, e.g. {{ox: 1.65, fuel: 1}}")
        feeds, feed_sigma = {}, None
        for tank_id, parts in feeds_node.items():
            if str(tank_id) not in tank_ids:
                raise InputError(f"{f.at('feeds')}: unknown tank {shown(tank_id)} (tanks: {', '.join(sorted(tank_ids))})")
            if isinstance(parts, Mapping):  # {parts: 1.65, sigma: 0.02}: this feed's parts drift, the other's hold
                sigma = _ratio_sigma(parts.get("sigma"), f"{f.at('feeds')}.{tank_id}.sigma")
                if feed_sigma is not None:
                    raise InputError(f"{f.at('feeds')}.{tank_id}: a sigma on one feed only (the mixture ratio is that "
                                     "feed's parts over the other's)")
                feed_sigma, parts = (str(tank_id), sigma), parts.get("parts")
            share = _mass_parts(parts)
            if share is None:
                raise InputError(f"{f.at('feeds')}.{tank_id}: expected a positive number of mass parts, got {shown(parts)}")
            feeds[str(tank_id)] = share
        feeds, mr_sigma = _mixture(f, feeds, feed_sigma, node.get("mixture_ratio_sigma"))
        cant = f.qty("cant", "angle", 0.0)
        if cant >= 90.0:
            raise InputError(f"{f.at('cant')}: {cant:g} deg leaves no thrust along the burn (expected below 90 deg)")
        performance = _performance(src, f, node.get("performance"), feeds, {t.id: t for t in tanks})
        qualified = _qualified(src, f, node.get("qualified_pressure"))
        if performance is None:
            isp, thrust = f.qty("isp", "time", positive=True), f.qty("thrust", "force", positive=True)
        else:  # the table at the feed pressure at loading stands for the engine's nominal figures
            p0 = sum(share * next(t for t in tanks if t.id == tid).pressurant.pressure_pa
                     for tid, share in feeds.items()) / sum(feeds.values())
            isp = float(np.interp(p0, performance.pressure_pa, performance.isp_s))
            thrust = float(np.interp(p0, performance.pressure_pa, performance.thrust_n))
        engines.append(Engine(id=f.text("id"), isp_s=isp, thrust_n=thrust, feeds=feeds, cant_deg=cant,
                              isp_sigma_s=f.qty("isp_sigma", "time", required=False),
                              thrust_sigma_n=f.qty("thrust_sigma", "force", required=False),
                              mixture_ratio_sigma=mr_sigma, performance=performance,
                              qualified_pressure_pa=qualified,
                              **_pulse_and_life(src, node, f"engines[{i}]", thrust, performance)))
    _unique(src, "engines", [e.id for e in engines])
    engine_ids = {e.id for e in engines}

    def engine_ref(f: _Fields) -> str:
        ref = f.text("engine")
        if ref not in engine_ids:
            raise InputError(f"{f.at('engine')}: unknown engine '{ref}' (engines: {', '.join(sorted(engine_ids))})")
        return ref

    reserves = []
    for i, node in enumerate(_list(src, doc, "reserves", required=False)):
        f = _Fields(src, node, f"reserves[{i}]")
        reserves.append(Reserve(f.text("id"), engine_ref(f), f.qty("dv", "speed")))
    _unique(src, "reserves", [r.id for r in reserves])
    routine = []
    ops = head.node.get("operations") or doc.get("operations") or {}
    if not isinstance(ops, Mapping):
        raise InputError(f"{src}: operations: expected a mapping with 'routine'")
    routine_nodes = ops.get("routine") or []
    if not isinstance(routine_nodes, list):
        raise InputError(f"{src}: operations.routine: expected a list of {{engine, dv_per_year}}")
    for i, node in enumerate(routine_nodes):
        f = _Fields(src, node, f"operations.routine[{i}]")
        routine.append(Routine(engine_ref(f), f.qty("dv_per_year", "speed")))
    extra = {}
    if ops.get("plan_dv_tolerance") is not None:
        extra["plan_dv_tolerance"] = _plan_dv_tolerance(src, ops["plan_dv_tolerance"])
    if ops.get("approval") is not None:
        extra["approval"] = _approval_rule(src, ops["approval"])
    if doc.get("import") is not None:  # device names and firings columns for 'propledger import'
        from .importconfig import import_config  # noqa: PLC0415

        extra["import"] = import_config(doc["import"], src, sorted(engine_ids))
    return Craft(name=name, dry_mass_kg=dry_mass, extra=extra,
                 tanks=_with_gas_tables(src, tanks), engines=tuple(engines), reserves=tuple(reserves),
                 routine=tuple(routine), dry_mass_sigma_kg=head.qty("dry_mass_sigma", "mass", required=False))


EXPANSION_RANGE = (1.0, 1.667)
"""Polytropic exponent of a blowdown tank's pressurant: isothermal up to adiabatic helium (gamma 5/3)."""


def _expansion(f: _Fields) -> float:
    value = f.node.get("expansion")
    if value is None:
        return 1.0
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not (
            EXPANSION_RANGE[0] <= float(value) <= EXPANSION_RANGE[1]):
        raise InputError(f"{f.at('expansion')}: expected a polytropic exponent from {EXPANSION_RANGE[0]} (isothermal)"
                         f" to {EXPANSION_RANGE[1]} (adiabatic helium), got {shown(value)}")
    return float(value)


def _quantities(f: _Fields, node: Mapping, key: str, dimension: str, n: int | None) -> list[float]:
    values = node.get(key)
    where = f"{f.at('performance')}.{key}"
    if not isinstance(values, list) or len(values) < 2 or (n is not None and len(values) != n):
        need = f"{n} values (one per pressure)" if n is not None else "at least two values"
        raise InputError(f"{where}: expected a list of {need}, got {shown(values)}")
    return [parse_quantity(v, dimension, f"{where}[{i}]", positive=True) for i, v in enumerate(values)]


def _performance(src: str, f: _Fields, node: Any, feeds: Mapping[str, float], tanks: Mapping[str, Tank]):
    """engines[i].performance: {pressure, thrust, isp} lists against feed pressure (strictly increasing)."""
    if node is None:
        return None
    if not isinstance(node, Mapping):
        raise InputError(f"{f.at('performance')}: expected a mapping with pressure, thrust and isp lists")
    pressure = _quantities(f, node, "pressure", "pressure", None)
    if any(b <= a for a, b in zip(pressure, pressure[1:])):
        raise InputError(f"{f.at('performance')}.pressure: expected strictly increasing pressures")
    thrust = _quantities(f, node, "thrust", "force", len(pressure))
    isp = _quantities(f, node, "isp", "time", len(pressure))
    not_blowdown = [t for t in feeds if not tanks[t].blowdown or _gas_stored(src, tanks[t])]
    if not_blowdown:
        raise InputError(f"{f.at('performance')}: tank {not_blowdown[0]} has no `volume` and `pressurant`: a table "
                         "against feed pressure needs blowdown tanks of liquid propellant")
    return Performance(tuple(pressure), tuple(thrust), tuple(isp))


def _qualified(src: str, f: _Fields, node: Any) -> tuple[float, float] | None:
    if node is None:
        return None
    where = f.at("qualified_pressure")
    if not isinstance(node, list) or len(node) != 2:
        raise InputError(f"{where}: expected [lowest, highest] inlet pressure such as ['5.5 bar', '24 bar']")
    lo, hi = (parse_quantity(v, "pressure", f"{where}[{i}]", positive=True) for i, v in enumerate(node))
    if hi <= lo:
        raise InputError(f"{where}: the highest pressure must be above the lowest")
    return lo, hi


def _with_gas_tables(src: str, tanks: list[Tank]) -> tuple[Tank, ...]:
    """Blowdown tanks of a liquid get their pressurant's real-gas table (CoolProp, loaded only here)."""
    out = []
    for t in tanks:
        if t.blowdown and not _gas_stored(src, t):
            from .. import realgas  # noqa: PLC0415 - CoolProp only for a craft with blowdown tanks

            try:
                t = replace(t, gas_table=realgas.gas_table(t))
            except (ValueError, KeyError) as exc:
                raise InputError(f"{src}: tank {t.id}: {str(exc).splitlines()[0] if str(exc) else exc!r}") from None
        out.append(t)
    return tuple(out)


def _gas_stored(src: str, t: Tank) -> bool:
    """True for a gas-stored tank and for a fluid without a liquid correlation (no blowdown model then)."""
    try:
        return is_gas_name(t.fluid)
    except ValueError:
        return True


def _plan_dv_tolerance(src: str, node: Any) -> dict[str, float]:
    """operations.plan_dv_tolerance: {relative: 0.1 or '10 %', absolute: '0.05 m/s'}: how far an executed
    burn's delta-v may stray from its plan's before a warning (services.execution)."""
    where = "operations.plan_dv_tolerance"
    if not isinstance(node, Mapping):
        raise InputError(f"{src}: {where}: expected a mapping with 'relative' and/or 'absolute'")
    out = {}
    rel = node.get("relative")
    if rel is not None:
        text = str(rel).strip()
        try:
            value = float(text[:-1]) / 100.0 if text.endswith("%") else float(text)
        except ValueError:
            raise InputError(f"{src}: {where}.relative: expected a fraction such as 0.1 or '10 %', got {rel!r}") from None
        if not (0 <= value < 10) or value != value:
            raise InputError(f"{src}: {where}.relative: expected a fraction from 0, got {rel!r}")
        out["relative"] = value
    if node.get("absolute") is not None:
        out["absolute_m_s"] = _Fields(src, node, where).qty("absolute", "speed")
    return out


MAX_APPROVERS = 20
"""More distinct approvers than any control room has on shift; a bound that catches a typo like 22."""


def _approval_rule(src: str, node: Any) -> dict[str, float | int]:
    """operations.approval: {approvers: 2, above_dv: '5 m/s'}: a plan whose delta-v is above above_dv needs
    approvals from that many distinct names (services.approvalrule)."""
    where = "operations.approval"
    if not isinstance(node, Mapping):
        raise InputError(f"{src}: {where}: expected a mapping such as {{approvers: 2, above_dv: 5 m/s}}")
    unknown = sorted(str(k) for k in node if k not in ("approvers", "above_dv"))
    if unknown:
        raise InputError(f"{src}: {where}: unknown field {shown(unknown[0])} (expected approvers and above_dv)")
    n = node.get("approvers")
    if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= MAX_APPROVERS:
        raise InputError(f"{src}: {where}.approvers: expected a whole number of people from 1 to {MAX_APPROVERS}, "
                         f"got {shown(n)}")
    above = _Fields(src, node, where).qty("above_dv", "speed", 0.0)
    return {"approvers": n, "above_dv_m_s": above}


LIFE_KEYS = {"pulses": ("pulses", None), "throughput": ("throughput_kg", "mass"), "on_time": ("on_time_s", "time")}
"""``life:`` keys of an engine -> (stored key, dimension; None for a plain count)."""


def _pulse_and_life(src: str, node: Mapping, where: str, thrust: float = 0.0,
                    performance: Performance | None = None) -> dict[str, Any]:
    """An engine's ``pulse: {isp_factor: 0.75}`` or ``pulse: {impulse_bit: {...}}`` (or both) and ``life:
    {pulses: 300000, throughput: 120 kg, on_time: 50 h}`` (each optional): the pulse-mode Isp share, the
    impulse per pulse against on-time and the qualified life limits."""
    out: dict[str, Any] = {}
    if node.get("pulse") is not None:
        p = _Fields(src, node["pulse"], f"{where}.pulse")
        if not p.node:
            raise InputError(f"{p.at('isp_factor')}: expected isp_factor (e.g. 0.75) and/or an impulse_bit table")
        factor = p.node.get("isp_factor")
        if factor is not None or "impulse_bit" not in p.node:
            if isinstance(factor, bool) or not isinstance(factor, (int, float)) or not 0 < float(factor) <= 1:
                raise InputError(f"{p.at('isp_factor')}: expected the pulse-mode Isp as a share of steady state, "
                                 f"above 0 and at most 1 (e.g. 0.75), got {shown(factor)}")
            out["pulse_isp_factor"] = float(factor)
        if p.node.get("impulse_bit") is not None:
            out["impulse_bit"] = _impulse_bit(src, p.node["impulse_bit"], f"{where}.pulse.impulse_bit", thrust,
                                              performance)
    if node.get("life") is not None:
        f = _Fields(src, node["life"], f"{where}.life")
        unknown = sorted(set(map(str, f.node)) - set(LIFE_KEYS))
        if unknown or not f.node:
            raise InputError(f"{f.at(unknown[0] if unknown else 'pulses')}: expected life limits from "
                             f"{', '.join(LIFE_KEYS)} (e.g. {{pulses: 300000, throughput: 120 kg}})")
        life = {}
        for key, (stored, dim) in LIFE_KEYS.items():
            if key not in f.node:
                continue
            if dim is None:
                value = f.node[key]
                if isinstance(value, bool) or not isinstance(value, int) or not 0 < value < 2**53:
                    raise InputError(f"{f.at(key)}: expected a whole number of pulses above 0, got {shown(value)}")
                life[stored] = float(value)
            else:
                life[stored] = f.qty(key, dim, positive=True)
        out["life"] = life
    return out


MAX_TABLE_POINTS = 200
"""A measured impulse-bit table has a few to a few tens of on-times; far more is a pasted data file."""


def _impulse_bit(src: str, node: Any, where: str, thrust: float, performance: Performance | None) -> ImpulseBit:
    """``impulse_bit: {on_time: [20 ms, 50 ms, 100 ms], impulse: [8 mN s, 30 mN s, 80 mN s], pressure: 22 bar}``:
    the impulse of one pulse (I_bit = integral of F dt over the pulse) against the commanded on-time, strictly
    increasing on-times, one positive impulse each. ``pressure`` (the feed pressure the table was measured
    at) is needed with a performance table, so the impulse bit can follow thrust(p)/thrust(pressure), and
    refused without one (a constant engine has no pressure to follow)."""
    if not isinstance(node, Mapping):
        raise InputError(f"{src}: {where}: expected a mapping with on_time and impulse lists (and pressure)")
    lists = {}
    for key, dim in (("on_time", "time"), ("impulse", "impulse")):
        values = node.get(key)
        if not isinstance(values, list) or not 2 <= len(values) <= MAX_TABLE_POINTS:
            raise InputError(f"{src}: {where}.{key}: expected a list of 2 to {MAX_TABLE_POINTS} values such as "
                             f"{'[20 ms, 50 ms]' if key == 'on_time' else '[8 mN s, 30 mN s]'}, got {shown(values)}")
        lists[key] = [parse_quantity(v, dim, f"{src}: {where}.{key}[{i}]", positive=True) for i, v in enumerate(values)]
    on_time, impulse = lists["on_time"], lists["impulse"]
    if len(impulse) != len(on_time):
        raise InputError(f"{src}: {where}: {len(on_time)} on-times but {len(impulse)} impulses (one impulse per "
                         "on-time)")
    if any(b <= a for a, b in zip(on_time, on_time[1:])):
        raise InputError(f"{src}: {where}.on_time: expected strictly increasing on-times")
    pressure = None
    if node.get("pressure") is not None:
        if performance is None:
            raise InputError(f"{src}: {where}.pressure: this engine has no performance table, so the impulse bit "
                             "cannot follow the feed pressure; leave pressure out")
        pressure = parse_quantity(node["pressure"], "pressure", f"{src}: {where}.pressure", positive=True)
        thrust = float(np.interp(pressure, performance.pressure_pa, performance.thrust_n))
    elif performance is not None:
        raise InputError(f"{src}: {where}.pressure: missing: with a performance table give the feed pressure the "
                         "impulse bits were measured at (e.g. pressure: 22 bar)")
    return ImpulseBit(tuple(on_time), tuple(impulse), float(thrust), pressure)


def load_craft(path: str) -> Craft:
    """The craft of a craft file, or of a bundled scenario file: its ``history`` (the demo's invented past,
    loaded only by ``demo``/``scenario``) is allowed there and not recorded."""
    return craft_from_document(load_yaml(path), path, extra_top=("history",))


# --- the keys a craft file may hold, level by level -------------------------------------------------
# None: a value of any shape (its own parser checks it); a dict: a mapping with exactly these keys; a list
# of one schema: a list of such items; FEEDS: tank ids to mass parts or {parts, sigma}.
FEEDS = object()
_OPERATIONS = {"routine": [{"engine": None, "dv_per_year": None}],
               "plan_dv_tolerance": {"relative": None, "absolute": None},
               "approval": {"approvers": None, "above_dv": None}}
KEYS: dict[str, Any] = {
    "craft": {"name": None, "dry_mass": None, "dry_mass_sigma": None, "operations": _OPERATIONS},
    "tanks": [{"id": None, "fluid": None, "load": None, "residual": None, "volume": None, "load_sigma": None,
               "expansion": None, "pressurant": {"gas": None, "pressure": None, "temperature": None}}],
    "engines": [{"id": None, "feeds": FEEDS, "isp": None, "thrust": None, "cant": None, "isp_sigma": None,
                 "thrust_sigma": None, "mixture_ratio_sigma": None,
                 "performance": {"pressure": None, "thrust": None, "isp": None}, "qualified_pressure": None,
                 "pulse": {"isp_factor": None, "impulse_bit": {"on_time": None, "impulse": None, "pressure": None}},
                 "life": {"pulses": None, "throughput": None, "on_time": None}}],
    "reserves": [{"id": None, "engine": None, "dv": None}],
    "operations": _OPERATIONS,
    "import": {"devices": None, "delta_mass_tolerance": {"relative": None, "absolute": None},
               "firings": {"columns": {"time": None, "thruster": None, "on_time": None, "pulses": None},
                           "on_time_unit": None, "pass_gap": None, "orbit_period": None, "orbit_epoch": None}},
}
"""Why refuse what is not here: a key in the wrong place (``approval:`` beside ``operations:`` instead of
under it, ``isp_factor`` on the engine instead of under ``pulse:``) was silently dropped, and with it a
two-person rule or a pulse-mode Isp. Every level the parser reads is listed; keep it in step with the parser."""


def _places(schema: Any, path: str, out: dict[str, list[str]]) -> dict[str, list[str]]:
    """key -> every generic path it is known at ('engines[].pulse.isp_factor'), for the did-you-mean."""
    if isinstance(schema, list):
        return _places(schema[0], path + "[]", out)
    if isinstance(schema, dict):
        for key, sub in schema.items():
            full = f"{path}.{key}" if path else key
            out.setdefault(key, []).append(full)
            _places(sub, full, out)
    if schema is FEEDS:
        for key in ("parts", "sigma"):
            out.setdefault(key, []).append(f"{path}.<tank>.{key}")
    return out


def _suggestion(key: str, allowed: list[str], generic: str, concrete: str) -> str:
    """' (did you mean X?)': a close spelling at this level, else the same key where it belongs."""
    import difflib  # noqa: PLC0415

    close = difflib.get_close_matches(key, allowed, n=1, cutoff=0.6)
    if close:
        return f" (did you mean {close[0]}?)"
    places = _places(KEYS, "", {}).get(key) or []
    if not places:
        wrong = {k.lower(): k for k in _places(KEYS, "", {})}
        near = difflib.get_close_matches(key.lower(), list(wrong), n=1, cutoff=0.8)
        places = _places(KEYS, "", {}).get(wrong[near[0]], []) if near else []
    if not places:
        return ""
    inside = [p for p in places if generic and p.startswith(generic + ".")]
    best = (inside or places)[0]
    if inside:
        best = concrete + best[len(generic):]
    return f" (did you mean {best}?)"


def check_keys(src: str, doc: Any, extra_top: tuple[str, ...] = ()) -> None:
    """Refuse any key the parser would not read, with one line naming the key and where it is."""
    top = dict(KEYS, **{k: None for k in extra_top})

    def walk(node: Any, schema: Any, generic: str, concrete: str) -> None:
        if schema is None or not isinstance(node, (Mapping, list)):
            return  # the parser of that value reports a wrong shape with its own message
        if isinstance(schema, list):
            if isinstance(node, list):
                for i, item in enumerate(node):
                    walk(item, schema[0], generic + "[]", f"{concrete}[{i}]")
            return
        if not isinstance(node, Mapping):
            return
        if schema is FEEDS:
            for tank_id, value in node.items():
                walk(value, {"parts": None, "sigma": None}, f"{generic}.<tank>", f"{concrete}.{tank_id}")
            return
        for key in node:
            if not isinstance(key, str) or key not in schema:
                where = concrete or "top level"
                hint = _suggestion(str(key), list(schema), generic, concrete)
                raise InputError(f"craft file {src}: unknown key {shown(key)} at {where}{hint}")
            walk(node[key], schema[key], f"{generic}.{key}" if generic else key,
                 f"{concrete}.{key}" if concrete else key)

    if isinstance(doc, Mapping):
        walk(doc, top, "", "")
        head = doc.get("craft")
        if isinstance(head, Mapping) and head.get("operations") is not None and doc.get("operations") is not None:
            raise InputError(f"craft file {src}: operations given both at top level and under craft: keep one "
                             "(craft.operations); the other would be ignored")
