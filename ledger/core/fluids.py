"""Fluid names the ledger understands, in one place.

Why here: liquids (core, correlations) and gases (shell, CoolProp) must agree on
names and on the one-line error for an unknown fluid, without core importing the shell.
"""

from __future__ import annotations

KNOWN_LIQUIDS: tuple[str, ...] = ("hydrazine", "MMH", "NTO", "MON-1", "MON-3")
KNOWN_GASES: tuple[str, ...] = ("helium", "xenon", "krypton", "nitrogen", "argon")

_LIQUID_ALIASES = {
    "hydrazine": "hydrazine",
    "n2h4": "hydrazine",
    "mmh": "MMH",
    "monomethylhydrazine": "MMH",
    "methylhydrazine": "MMH",
    "nto": "NTO",
    "n2o4": "NTO",
    "nitrogen-tetroxide": "NTO",
    "dinitrogen-tetroxide": "NTO",
    "mon-1": "MON-1",
    "mon1": "MON-1",
    "mon-3": "MON-3",
    "mon3": "MON-3",
}

_GAS_ALIASES = {
    "helium": "helium",
    "he": "helium",
    "xenon": "xenon",
    "xe": "xenon",
    "krypton": "krypton",
    "kr": "krypton",
    "nitrogen": "nitrogen",
    "n2": "nitrogen",
    "gn2": "nitrogen",
    "argon": "argon",
    "ar": "argon",
}


def _key(name: object) -> str:
    """Case-, space- and underscore-insensitive lookup key ('MON 3' == 'mon-3')."""
    if not isinstance(name, str):
        raise unknown_fluid_error(name)
    return name.strip().lower().replace("_", "-").replace(" ", "-")


def unknown_fluid_error(name: object) -> ValueError:
    """The one-line error for a fluid name we do not know, listing what we do know."""
    return ValueError(
        f"unknown fluid {name!r}; known liquids: {', '.join(KNOWN_LIQUIDS)}; "
        f"known gases: {', '.join(KNOWN_GASES)}"
    )


def canonical_liquid(name: str) -> str:
    """Canonical liquid name for any accepted spelling; ValueError if not a known liquid."""
    key = _key(name)
    if key in _LIQUID_ALIASES:
        return _LIQUID_ALIASES[key]
    if key in _GAS_ALIASES:
        raise ValueError(
            f"{name!r} is a stored gas, not a liquid propellant; "
            f"known liquids: {', '.join(KNOWN_LIQUIDS)}"
        )
    raise unknown_fluid_error(name)


def canonical_gas(name: str) -> str:
    """Canonical gas name for any accepted spelling; ValueError if not a known gas."""
    key = _key(name)
    if key in _GAS_ALIASES:
        return _GAS_ALIASES[key]
    if key in _LIQUID_ALIASES:
        raise ValueError(
            f"{name!r} is a liquid propellant, not a gas; known gases: {', '.join(KNOWN_GASES)}"
        )
    raise unknown_fluid_error(name)


def is_gas_name(name: str) -> bool:
    """True for a known gas, False for a known liquid; ValueError for anything else."""
    key = _key(name)
    if key in _GAS_ALIASES:
        return True
    if key in _LIQUID_ALIASES:
        return False
    raise unknown_fluid_error(name)
