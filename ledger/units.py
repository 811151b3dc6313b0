"""The one place where text with units becomes SI floats (pint, loaded only when a unit is written).

A bare number is taken in the field's base unit (kg, s, N, deg, m/s, Pa, K, m^3); a temperature
difference (a sensor sigma) reads '0.5 degC' as 0.5 K. Every value must be
finite; signs are checked by the caller's rule. Errors name the field and what was expected.

Common spellings pint does not read are mapped first: 'lbm' is the pound (mass); 'psia' and 'psig' are
the psi. A gauge reading is relative to the ambient pressure, so psig = psia only where the ambient is
about zero (in orbit); on the ground add the ambient first. Where a temperature is expected 'C' and 'F'
are degC and degF (pint alone reads them as coulomb and farad); elsewhere they get a hint.
"""
from __future__ import annotations

import math
import re
from functools import lru_cache
from typing import Any

from .errors import InputError

# dimension name -> (base unit text, pint dimensionality string)
DIMENSIONS: dict[str, tuple[str, str]] = {
    "mass": ("kg", "[mass]"),
    "time": ("s", "[time]"),
    "force": ("N", "[mass] * [length] / [time] ** 2"),
    "angle": ("deg", ""),
    "speed": ("m/s", "[length] / [time]"),
    "pressure": ("Pa", "[mass] / [length] / [time] ** 2"),
    "temperature": ("K", "[temperature]"),
    "temperature_difference": ("K", "[temperature]"),
    "volume": ("m^3", "[length] ** 3"),
    "impulse": ("N s", "[mass] * [length] / [time]"),
}
_ALIASES = ((re.compile(r"\blbm\b"), "lb"), (re.compile(r"\bpsi[ag]\b"), "psi"))
_TEMPERATURE_LETTER = {"C": "degC", "F": "degF", "c": "degC"}
GAUGE_NOTE = ("psig is read as psia: a gauge pressure needs the ambient added, which is about zero in orbit; "
              "on the ground add the ambient first")
_NUMBER = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


@lru_cache(maxsize=1)
def registry():
    import pint  # noqa: PLC0415 - heavy (about 0.5 s); only when a unit is actually written

    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


def _from_pint(number: float, unit: str, dimension: str, where: str) -> float:
    import pint  # noqa: PLC0415

    ureg = registry()
    base, dims = DIMENSIONS[dimension]
    written = unit
    unit = unit.replace("°C", "degC").replace("°F", "degF").replace("°", "deg")
    for pattern, name in _ALIASES:
        unit = pattern.sub(name, unit)
    if dimension in ("temperature", "temperature_difference"):
        unit = _TEMPERATURE_LETTER.get(unit, unit)
    if dimension == "temperature_difference":  # a spread, not a reading: 0.5 degC is 0.5 K
        unit = {"degC": "delta_degC", "degF": "delta_degF", "celsius": "delta_degC"}.get(unit, unit)
    try:
        q = ureg.Quantity(number, unit)
        if dimension == "angle":
            if not q.dimensionless:
                raise pint.DimensionalityError(q.units, "deg")
            return float(q.to("deg").magnitude)
        if dimension in ("temperature", "temperature_difference"):
            return float(q.to("kelvin").magnitude)
        return float(q.to(base.replace("^", "**")).magnitude)
    except pint.DimensionalityError:
        raise InputError(f"{where}: '{number:g} {written}' is not a {dimension} (expected a unit like {base})"
                         + _hint(written, dimension)) from None
    except Exception:  # noqa: BLE001 - pint's parser raises many kinds (tokenize errors, ZeroDivisionError for '1/0')
        raise InputError(f"{where}: unknown unit '{written}' (expected a {dimension} such as {base})"
                         + _hint(written, dimension)) from None


def _hint(unit: str, dimension: str) -> str:
    """Why a common spelling was not read as meant: a letter that is a temperature only in a temperature field,
    an angle degree given for a temperature, or a pressure that needs telling apart from gauge."""
    if unit in ("C", "F", "°C", "°F"):
        return (f"; '{unit}' is read as a temperature only where one is expected (else coulomb or farad): "
                "write degC, degF or K")
    if dimension.startswith("temperature") and unit in ("deg", "°", "degree", "degrees"):
        return "; 'deg' alone is an angle: write degC, degF or K"
    if dimension == "pressure":
        return f"; e.g. bar, kPa, MPa, psi, psia or psig ({GAUGE_NOTE})"
    return ""


def parse_quantity(value: Any, dimension: str, where: str, *, signed: bool = False, positive: bool = False) -> float:
    """SI float from a number or a 'number unit' string; raises InputError naming ``where``."""
    base = DIMENSIONS[dimension][0]
    if isinstance(value, bool) or value is None:
        raise InputError(f"{where}: expected a {dimension} (a number in {base} or text like '12 {base}'), got {value!r}")
    if isinstance(value, (int, float)):
        if isinstance(value, int) and abs(value) > 10**300:
            raise InputError(f"{where}: the number is out of range")
        number, unit = float(value), ""
    elif isinstance(value, str):
        m = _NUMBER.match(value)
        if not m or not m.group(1).isascii():
            raise InputError(f"{where}: expected a {dimension} like '12 {base}', got {value!r}")
        number, unit = float(m.group(1)), m.group(2)
    else:
        raise InputError(f"{where}: expected a {dimension}, got {type(value).__name__}")
    if not math.isfinite(number):
        raise InputError(f"{where}: {value!r} is not a finite number")
    si = number if unit in ("", base) else _from_pint(number, unit, dimension, where)
    if not math.isfinite(si):
        raise InputError(f"{where}: {value!r} is not a finite {dimension}")
    if dimension == "temperature" and si <= 0:
        raise InputError(f"{where}: {value!r} is at or below absolute zero")
    if not signed and si < 0:
        raise InputError(f"{where}: {value!r} must not be negative")
    if positive and si <= 0:
        raise InputError(f"{where}: {value!r} must be greater than zero")
    return si
