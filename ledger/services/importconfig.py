"""The craft file's ``import:`` section: how names in flight-dynamics messages and telemetry files map
onto the ledger (device -> engine), the firings CSV's column names and units, and the tolerance on the
message's own propellant figure. Read once with the craft file; kept in the craft as SI numbers.

    import:
      devices: {THR-A: nsk, THR_01: rcs}        # MAN_DEVICE_ID or CSV thruster -> engine id
      delta_mass_tolerance: {relative: 5 %, absolute: 0.2 kg}
      firings:
        columns: {time: utc, thruster: thr, on_time: on_ms, pulses: n}
        on_time_unit: ms                          # a bare number in the on-time column (default s)
        pass_gap: 30 min                          # a longer quiet gap starts a new pass
        orbit_period: 98.6 min                    # needed for --group orbit
        orbit_epoch: 2026-12-01T00:00:00Z         # where orbit 0 starts (default: the first row)
"""
from __future__ import annotations

from typing import Any, Iterable, Mapping

from ..errors import InputError

COLUMNS = ("time", "thruster", "on_time", "pulses")
DEFAULT_PASS_GAP_S = 1800.0
DEFAULT_DM_REL, DEFAULT_DM_ABS_KG = 0.05, 0.1
"""Message DELTA_MASS against the ledger's own propellant figure: a warning beyond max(5 %, 0.1 kg)
(a project choice, settable; about the scatter of a flight-dynamics mass estimate, common practice)."""


def _text(src: str, where: str, value: Any) -> str:
    if isinstance(value, bool) or not isinstance(value, (str, int, float)) or not str(value).strip():
        raise InputError(f"{src}: {where}: expected a name, got {value!r}")
    text = str(value).strip()
    if not text.isprintable() or len(text) > 100:
        raise InputError(f"{src}: {where}: expected a printable name of at most 100 characters")
    return text


def _fraction(src: str, where: str, value: Any) -> float:
    text = str(value).strip()
    try:
        out = float(text[:-1]) / 100.0 if text.endswith("%") else float(text)
    except ValueError:
        raise InputError(f"{src}: {where}: expected a fraction such as 0.05 or '5 %', got {value!r}") from None
    if not 0 <= out < 10:
        raise InputError(f"{src}: {where}: expected a fraction from 0, got {value!r}")
    return out


def import_config(node: Any, src: str, engine_ids: Iterable[str]) -> dict[str, Any]:
    """The validated ``import:`` section (SI floats); InputError naming file and field otherwise."""
    from ..units import parse_quantity  # noqa: PLC0415

    engines = list(engine_ids)
    if not isinstance(node, Mapping):
        raise InputError(f"{src}: import: expected a mapping with devices, firings, delta_mass_tolerance")
    unknown = set(node) - {"devices", "firings", "delta_mass_tolerance"}
    if unknown:
        raise InputError(f"{src}: import: unknown field {sorted(map(str, unknown))[0]!r} "
                         "(expected devices, firings, delta_mass_tolerance)")
    out: dict[str, Any] = {}
    devices = node.get("devices") or {}
    if not isinstance(devices, Mapping):
        raise InputError(f"{src}: import.devices: expected a mapping of device id to engine id, e.g. {{THR-A: nsk}}")
    out["devices"] = {}
    for dev, eng in devices.items():
        dev = _text(src, "import.devices", dev)
        eng = _text(src, f"import.devices.{dev}", eng)
        if eng not in engines:
            raise InputError(f"{src}: import.devices.{dev}: unknown engine '{eng}' (engines: {', '.join(engines)})")
        out["devices"][dev] = eng
    tol = node.get("delta_mass_tolerance")
    if tol is not None:
        if not isinstance(tol, Mapping):
            raise InputError(f"{src}: import.delta_mass_tolerance: expected {{relative: '5 %', absolute: '0.1 kg'}}")
        t: dict[str, float] = {}
        if tol.get("relative") is not None:
            t["relative"] = _fraction(src, "import.delta_mass_tolerance.relative", tol["relative"])
        if tol.get("absolute") is not None:
            t["absolute_kg"] = parse_quantity(tol["absolute"], "mass", f"{src}: import.delta_mass_tolerance.absolute")
        out["delta_mass_tolerance"] = t
    firings = node.get("firings")
    if firings is not None:
        if not isinstance(firings, Mapping):
            raise InputError(f"{src}: import.firings: expected a mapping with columns, on_time_unit, pass_gap, orbit_period")
        f: dict[str, Any] = {}
        cols = firings.get("columns") or {}
        if not isinstance(cols, Mapping) or set(cols) - set(COLUMNS):
            raise InputError(f"{src}: import.firings.columns: expected a mapping from {', '.join(COLUMNS)} to header names")
        f["columns"] = {k: _text(src, f"import.firings.columns.{k}", v) for k, v in cols.items()}
        where = f"{src}: import.firings"
        if firings.get("on_time_unit") is not None:
            f["on_time_unit_s"] = parse_quantity(f"1 {firings['on_time_unit']}", "time", f"{where}.on_time_unit",
                                                 positive=True)
        for key, dim in (("pass_gap", "time"), ("orbit_period", "time")):
            if firings.get(key) is not None:
                f[f"{key}_s"] = parse_quantity(firings[key], dim, f"{where}.{key}", positive=True)
        if firings.get("orbit_epoch") is not None:
            from .timefmt import parse_time  # noqa: PLC0415

            f["orbit_epoch"] = parse_time(str(firings["orbit_epoch"]), f"{where}.orbit_epoch")
        out["firings"] = f
    return out


def engine_for(config: Mapping[str, Any], engines: list[str], device: str, where: str) -> str:
    """The engine a device or thruster name stands for: the ``devices`` map, else an engine of that id."""
    devices = (config or {}).get("devices") or {}
    if device in devices:
        return str(devices[device])
    if device in engines:
        return device
    known = ", ".join(devices) or "none"
    raise InputError(f"{where}: unknown device '{device}' (devices in the craft file's import.devices: {known}; "
                     f"engines: {', '.join(engines)})")


def device_for(config: Mapping[str, Any], engine: str) -> str:
    """The device name an engine is exported under: the first device mapped to it, else its own id."""
    for dev, eng in ((config or {}).get("devices") or {}).items():
        if eng == engine:
            return str(dev)
    return engine


def dm_tolerance(config: Mapping[str, Any]) -> tuple[float, float]:
    tol = (config or {}).get("delta_mass_tolerance") or {}
    return float(tol.get("relative", DEFAULT_DM_REL)), float(tol.get("absolute_kg", DEFAULT_DM_ABS_KG))
