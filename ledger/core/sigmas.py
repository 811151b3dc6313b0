"""One-sigma uncertainties: the defaults used when a craft file or an entry gives none, in one place.

Every default is relative to the value it belongs to and names where it comes from (tags as in
docs/sources.md: [read], [memory], [practice]). A sigma written in the craft file or given with
``--sigma`` always wins; an explicit 0 means "known exactly" and switches that term off.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from .craft import Craft


@dataclass(frozen=True)
class Default:
    relative: float
    """One sigma as a fraction of the value (0.01 = 1 %)."""
    basis: str
    """Where the figure comes from."""


CRAFT_DEFAULTS: dict[str, Default] = {
    "dry_mass": Default(0.001, "craft weighed before fuelling, ~0.1 % (docs/sources.md §4 'loaded mass "
                               "~0.1 % by weighing') [memory]"),
    "load": Default(0.001, "propellant load by weighing ~0.1 % (docs/sources.md §4) [memory]; beginning-of-life "
                           "book-keeping 0.1 % (Shaik, Relangi & Thangavel, Aerospace 10(6):567, 2023) [read]"),
    "isp": Default(0.01, "Isp and flow-model bias 1-3 % (docs/sources.md §4) [memory]; low end taken"),
    "thrust": Default(0.02, "thrust and flow-model bias 1-3 % (docs/sources.md §4) [memory]; middle taken"),
}

ENTRY_DEFAULTS: dict[str, Default] = {
    "dv": Default(0.01, "achieved delta-v from orbit determination; 1 % of the burn is a project choice [practice]"),
    "duration": Default(0.01, "firing-to-firing repeatability of the flow on top of the engine's own "
                              "thrust/Isp bias (worse in pulse mode, docs/sources.md §4); 1 % is a project choice "
                              "[practice]"),
    "pulses": Default(0.03, "a pulse train's total on-time: short pulses repeat worse than steady firing (flow-"
                            "model bias 1-3 %, worse in pulse mode, docs/sources.md §4 [memory]); the top of that "
                            "range is taken, common practice [practice]"),
    "propellant": Default(0.01, "propellant quoted from gauging, PVT 1.0 % at beginning of life (Shaik et al., "
                                "Aerospace 10(6):567, 2023) [read]"),
    "delta": Default(0.001, "a separated or added item is weighed like the craft, ~0.1 % (docs/sources.md §4) "
                            "[memory]"),
}


def _or_default(sigma: float | None, value: float, key: str) -> float:
    return abs(value) * CRAFT_DEFAULTS[key].relative if sigma is None else float(sigma)


@dataclass(frozen=True)
class CraftSigmas:
    """The craft's one-sigma figures with defaults applied (kg, kg per tank, s and N per engine)."""

    dry_mass_kg: float
    load_kg: np.ndarray
    isp_s: np.ndarray
    thrust_n: np.ndarray


def craft_sigmas(craft: Craft) -> CraftSigmas:
    return CraftSigmas(
        dry_mass_kg=_or_default(craft.dry_mass_sigma_kg, craft.dry_mass_kg, "dry_mass"),
        load_kg=np.array([_or_default(t.load_sigma_kg, t.load_kg, "load") for t in craft.tanks], dtype=float),
        isp_s=np.array([_or_default(e.isp_sigma_s, e.isp_s, "isp") for e in craft.engines], dtype=float),
        thrust_n=np.array([_or_default(e.thrust_sigma_n, e.thrust_n, "thrust") for e in craft.engines], dtype=float),
    )


def entry_sigma(data: Mapping[str, Any], field: str) -> float:
    """One sigma of an entry's amount ``field`` (dv, duration, propellant or delta), in the field's SI unit."""
    given = data.get("sigma")
    if given is not None:
        return float(given)
    if field == "duration" and data.get("pulses") is not None:  # a pulse train: its own default, in seconds
        return abs(float(data[field])) * ENTRY_DEFAULTS["pulses"].relative
    return abs(float(data[field])) * ENTRY_DEFAULTS[field].relative


def entry_sigmas(fields: Sequence[str], amounts: np.ndarray, given: np.ndarray) -> np.ndarray:
    """``entry_sigma`` for many entries at once: the sigma given with an entry (NaN where none was), else
    the default share of its amount's size for that field."""
    relative = np.array([ENTRY_DEFAULTS[f].relative for f in fields], dtype=float)
    return np.where(np.isnan(given), np.abs(amounts) * relative, given)


def defaults_table() -> list[dict[str, Any]]:
    """The defaults as rows (for documentation and ``--json`` output)."""
    rows = [{"field": f"craft {k}_sigma", "relative": d.relative, "basis": d.basis} for k, d in CRAFT_DEFAULTS.items()]
    rows += [{"field": f"entry --sigma with --{k}", "relative": d.relative, "basis": d.basis}
             for k, d in ENTRY_DEFAULTS.items()]
    return rows
