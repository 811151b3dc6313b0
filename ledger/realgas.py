"""Real-gas density of pressurants and gas propellants through CoolProp.

Why outside core: CoolProp takes over a second to import, so it is imported inside the
functions that need it and never when this module is imported (a status command that never
gauges must not pay for it). Why CoolProp at all: an ideal gas is 7-15 % off for helium
bottles at 150-310 bar and useless for xenon near its critical point (measured with CoolProp
8.0.0; docs/sources.md §6).
"""

from __future__ import annotations

import numpy as np

from ledger.core.fluids import KNOWN_GASES, canonical_gas, is_gas_name

# Canonical name -> CoolProp fluid name (HEOS backend, reference equations of state).
_COOLPROP_NAMES = {
    "helium": "Helium",
    "xenon": "Xenon",
    "krypton": "Krypton",
    "nitrogen": "Nitrogen",
    "argon": "Argon",
}


def known_gases() -> tuple[str, ...]:
    """Canonical names of the gases this module can give densities for."""
    return KNOWN_GASES


def is_gas_stored(fluid: str) -> bool:
    """True if the fluid is stored as a gas (mass = rho_g * V), False for a liquid propellant.

    Unknown names raise ValueError listing every known fluid.
    """
    return is_gas_name(fluid)


def coolprop_name(gas: str) -> str:
    """CoolProp's name for a gas given in any accepted spelling."""
    return _COOLPROP_NAMES[canonical_gas(gas)]


def gas_density(
    gas: str, pressure_pa: float | np.ndarray, temperature_k: float | np.ndarray, allow_nan: bool = False
) -> float | np.ndarray:
    """Density in kg/m3 at (pressure_pa, temperature_k); floats or broadcastable arrays.

    Scalars in give a float back; any array in gives an array of the broadcast shape. Where CoolProp gives
    no finite density (on the saturation line) this raises one clear ValueError, or with ``allow_nan``
    returns NaN there (the gauge's sampling handles those states explicitly).
    """
    name = coolprop_name(gas)
    p, t = np.broadcast_arrays(
        np.asarray(pressure_pa, dtype=float), np.asarray(temperature_k, dtype=float)
    )
    if not (np.all(np.isfinite(p)) and np.all(np.isfinite(t))):
        raise ValueError(f"{gas} density: pressure and temperature must be finite numbers")
    if np.any(p <= 0.0):
        raise ValueError(f"{gas} density: pressure must be > 0 Pa; got {float(np.min(p)):.6g} Pa")
    if np.any(t <= 0.0):
        raise ValueError(f"{gas} density: temperature must be > 0 K; got {float(np.min(t)):.6g} K")

    from CoolProp.CoolProp import PropsSI  # lazy: heavy import, only when gauging

    scalar = np.ndim(pressure_pa) == 0 and np.ndim(temperature_k) == 0
    try:
        flat = PropsSI("D", "P", p.ravel(), "T", t.ravel(), name)
    except ValueError as exc:  # a scalar on the saturation line (or outside the equation's range)
        if not allow_nan:
            raise ValueError(f"{gas} density at {float(p.ravel()[0]):.6g} Pa, {float(t.ravel()[0]):.6g} K: "
                             f"{str(exc).splitlines()[0][:120]}") from None
        flat = np.full(p.size, np.nan)
    rho = np.asarray(flat, dtype=float).reshape(p.shape)
    bad = ~np.isfinite(rho) | (rho <= 0.0)
    if bad.any():
        # CoolProp returns inf for array elements it cannot flash (e.g. exactly on the saturation line,
        # where pressure and temperature fix no density): NaN for the caller to handle, or one clear error.
        if not allow_nan:
            k = int(np.flatnonzero(bad.ravel())[0])
            raise ValueError(f"{gas} density: no single-phase value at {float(p.ravel()[k]):.6g} Pa, "
                             f"{float(t.ravel()[k]):.6g} K (on the saturation line or outside the equation of state)")
        rho = np.where(bad, np.nan, rho)
    if scalar:
        return float(rho)
    return rho


def saturation(gas: str):
    """The gas's critical and triple points and its saturation curve T -> (p_sat, rho_liquid, rho_vapour),
    as ``core.gauging.Saturation`` (CoolProp's reference equation of state; NaN at or above Tc)."""
    from CoolProp.CoolProp import PropsSI  # lazy

    from ledger.core.gauging import Saturation  # noqa: PLC0415

    name = coolprop_name(gas)
    tc, pc, tt = (float(PropsSI(k, name)) for k in ("Tcrit", "pcrit", "Ttriple"))

    def curve(temperature_k):
        t = np.atleast_1d(np.asarray(temperature_k, dtype=float))
        out = np.full((3, t.size), np.nan)
        ok = np.isfinite(t) & (t >= tt) & (t < tc)
        if ok.any():
            q0, q1 = np.zeros(int(ok.sum())), np.ones(int(ok.sum()))
            out[0, ok] = PropsSI("P", "T", t[ok], "Q", q0, name)
            out[1, ok] = PropsSI("D", "T", t[ok], "Q", q0, name)
            out[2, ok] = PropsSI("D", "T", t[ok], "Q", q1, name)
        out[~np.isfinite(out)] = np.nan
        return out[0], out[1], out[2]

    return Saturation(critical_temperature_k=tc, critical_pressure_pa=pc, triple_temperature_k=tt, curve=curve)


def molar_mass(gas: str) -> float:
    """Molar mass in kg/mol as CoolProp's equation of state uses it."""
    from CoolProp.CoolProp import PropsSI  # lazy

    return float(PropsSI("M", coolprop_name(gas)))


def gas_table(tank):
    """The tank's pressurant mass at loading and its Z(density, T) table (``core.craft.GasTable``).

    Why here: the core interpolates the table with numpy (no CoolProp on a status); the loading mass is
    m_g = rho_g(P0 - p_vap(T0), T0)·V_u0, as the PVT gauging computes it (``core.gauging``)."""
    import CoolProp.CoolProp as CP  # lazy

    from ledger.core import blowdown, liquids
    from ledger.core.craft import GasTable

    pr = tank.pressurant
    t0 = float(np.clip(pr.temperature_k, *liquids.valid_range_k(tank.fluid)))
    p_gas0 = pr.pressure_pa - float(liquids.vapour_pressure(tank.fluid, t0))
    vu0 = blowdown.initial_ullage(tank)
    if vu0 <= 0:
        raise ValueError(f"tank {tank.id}: no ullage at loading ({tank.load_kg:g} kg fills the {tank.volume_m3:g} m3)")
    gas_kg = float(gas_density(pr.gas, p_gas0, pr.temperature_k)) * vu0
    rho, temps = blowdown.grids(tank, gas_kg)
    name = coolprop_name(pr.gas)
    m_mol = molar_mass(pr.gas)
    state = CP.AbstractState("HEOS", name)  # one state updated in place: far quicker than PropsSI on arrays
    z = np.empty((len(temps), len(rho)))
    for j, t in enumerate(temps.tolist()):
        for i, d in enumerate(rho.tolist()):
            state.update(CP.DmassT_INPUTS, d, t)
            z[j, i] = state.p() * m_mol / (d * blowdown.R_GAS * t)
    return GasTable(canonical_gas(pr.gas), gas_kg, m_mol, float(rho[0]), float(rho[1] - rho[0]),
                    float(temps[0]), float(temps[1] - temps[0]), tuple(tuple(float(v) for v in row) for row in z))
