"""Liquid propellant density and vapour pressure from published correlations.

Why: CoolProp has no hydrazine, MMH or N2O4, yet PVT gauging needs rho_l(T) to 0.2-0.3 %
and p_vap(T) to split tank pressure into pressurant and vapour. Each correlation names its
source, its valid range (outside it: ValueError, never silent extrapolation) and a 1-sigma
relative uncertainty that the gauging Monte Carlo uses. Pure numpy, SI units (K, Pa, kg/m3).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ledger.core.fluids import KNOWN_LIQUIDS, canonical_liquid

PSIA_PA = 6894.757293168  # 1 lbf/in2 in Pa (exact from the lb and in definitions)
RANKINE_K = 5.0 / 9.0


@dataclass(frozen=True)
class _Correlation:
    """Linear density rho = rho_ref + slope*(T - t_ref) and a vapour-pressure form."""

    rho_ref: float  # kg/m3 at t_ref
    t_ref_k: float
    slope: float  # kg/m3 per K
    pvap_form: str  # "dippr101" or "wagner25"
    pvap_coef: tuple[float, ...]
    t_min_k: float
    t_max_k: float
    density_sigma_rel: float
    pvap_sigma_rel: float


# Hydrazine.
#   Density: rho = 1025.7 - 0.86*t[degC], the straight line through Schmidt, "Hydrazine and
#   Its Derivatives" (1008.5 kg/m3 at 20 degC, 1004.2 at 25 degC; via a secondary summary, docs/sources.md §5),
#   stated for 2-50 degC. Published values spread about +-2 kg/m3 (AFRPL-TR-69-149: 1003.7 at
#   25 degC), hence sigma 0.2 %.
#   Vapour pressure: Perry's Chemical Engineers' Handbook, 8th ed., Table 2-8 (DIPPR eq. 101):
#   ln(p/Pa) = C1 + C2/T + C3 ln T + C4 T, C1..C4 = 76.858, -7245.2, -8.22, 0.0061557,
#   274.69-653.15 K (read in the table as transcribed in the CalebBell/chemicals data files).
#   Agrees with REFPROP's 1.4047 kPa at 20 degC to 0.5 %; sigma 2 %.
_HYDRAZINE = _Correlation(
    rho_ref=1025.7, t_ref_k=273.15, slope=-0.86,
    pvap_form="dippr101", pvap_coef=(76.858, -7245.2, -8.22, 0.0061557),
    t_min_k=275.15, t_max_k=323.15, density_sigma_rel=0.002, pvap_sigma_rel=0.02,
)

# MMH (monomethylhydrazine).
#   Density: anchored at AFRPL-TR-69-149, 870.2 kg/m3 at 298.0 K (via the RocketProps
#   documentation's reference-point table), slope -0.94 kg/m3/K from published tables (docs/sources.md
#   §5). REFPROP gives 875.6 at 20 degC (0.1 % from this line), Aerojet 879.8 (0.6 %),
#   hence sigma 0.3 %.
#   Vapour pressure: Wagner equation, 2.5-5 form (Poling, Prausnitz & O'Connell, "Properties of
#   Gases and Liquids", 5th ed.), constants fitted to AFRPL-TR-69-149 / REFPROP / Aerojet data
#   and published in the RocketProps documentation ("Models"): a, b, c, d = -6.700466713713631,
#   -0.09747624183487236, -0.7874544884949485, -6.37220831093827; Tc = 1053.67 degR,
#   Pc = 1195 psia (AFRPL-TR-69-149). 1.5 % below REFPROP at 20 degC; sigma 3 %.
_MMH = _Correlation(
    rho_ref=870.2, t_ref_k=298.0, slope=-0.94,
    pvap_form="wagner25",
    pvap_coef=(-6.700466713713631, -0.09747624183487236, -0.7874544884949485,
               -6.37220831093827, 1053.67 * RANKINE_K, 1195.0 * PSIA_PA),
    t_min_k=263.15, t_max_k=333.15, density_sigma_rel=0.003, pvap_sigma_rel=0.03,
)

# NTO (N2O4).
#   Density: anchored at AFRPL-TR-76-76 (Wright 1977), 1433 kg/m3 at 25 degC (via RocketProps
#   documentation), slope -2.3 kg/m3/K (docs/sources.md §5). Published 20 degC values
#   1441.4-1444.5 lie within 0.2 %; the straight line drifts about 0.3 % at the range ends.
#   Vapour pressure: Wagner 2.5-5 form, RocketProps constants a, b, c, d = -8.437950623751371,
#   -3.7198359775967993, 3.2683044393949223, 12.45086649764585; Tc = 776.47 degR,
#   Pc = 1441.3 psia. Within 2.1 % of AFRPL-TR-76-76 (120.3 kPa at 25 degC); sigma 3 %.
_NTO = _Correlation(
    rho_ref=1433.0, t_ref_k=298.15, slope=-2.3,
    pvap_form="wagner25",
    pvap_coef=(-8.437950623751371, -3.7198359775967993, 3.2683044393949223,
               12.45086649764585, 776.47 * RANKINE_K, 1441.3 * PSIA_PA),
    t_min_k=263.15, t_max_k=318.15, density_sigma_rel=0.003, pvap_sigma_rel=0.03,
)

# MON-1 / MON-3 (N2O4 with 1 % / 3 % NO by mass): NTO's correlations corrected linearly in NO
#   content towards MON-10, whose values at 20 degC are read in AFRPL-TR-76-76 (via RocketProps
#   documentation): 1419.77 kg/m3 and 24.2327 psia (167.1 kPa, against 96.9 kPa for NTO).
#   Treating MON-3 as plain NTO would put its density 0.5 % high and its vapour pressure 20 %
#   low, both beyond NTO's sigma. Linearity in NO content is an assumption: sigma 0.4 % on
#   density and 10 % on vapour pressure.
MON10_RHO_20C = 1419.77  # kg/m3, AFRPL-TR-76-76 via RocketProps documentation
MON10_PVAP_20C_PA = 24.2327 * PSIA_PA
_MON_NO_PERCENT = {"MON-1": 1.0, "MON-3": 3.0}
_MON = {
    name: _Correlation(
        rho_ref=_NTO.rho_ref, t_ref_k=_NTO.t_ref_k, slope=_NTO.slope,
        pvap_form=_NTO.pvap_form, pvap_coef=_NTO.pvap_coef,
        t_min_k=_NTO.t_min_k, t_max_k=_NTO.t_max_k,
        density_sigma_rel=0.004, pvap_sigma_rel=0.10,
    )
    for name in _MON_NO_PERCENT
}

_TABLE: dict[str, _Correlation] = {"hydrazine": _HYDRAZINE, "MMH": _MMH, "NTO": _NTO, **_MON}


def known_liquids() -> tuple[str, ...]:
    """Canonical names of the liquids with correlations."""
    return KNOWN_LIQUIDS


def _lookup(fluid: str) -> tuple[str, _Correlation]:
    name = canonical_liquid(fluid)
    return name, _TABLE[name]


def _checked_temperature(name: str, corr: _Correlation, temperature_k, what: str) -> np.ndarray:
    """Temperatures as an array, refusing NaN and anything outside the correlation's range."""
    t = np.asarray(temperature_k, dtype=float)
    if not np.all(np.isfinite(t)):
        raise ValueError(f"{name} {what}: temperature must be a finite number of kelvin")
    lo, hi = float(np.min(t)), float(np.max(t))
    if lo < corr.t_min_k or hi > corr.t_max_k:
        bad = lo if lo < corr.t_min_k else hi
        raise ValueError(
            f"{name} {what}: correlation valid {corr.t_min_k:.2f}-{corr.t_max_k:.2f} K "
            f"({corr.t_min_k - 273.15:.1f} to {corr.t_max_k - 273.15:.1f} degC); got {bad:.2f} K"
        )
    return t


def _out(values: np.ndarray, like) -> float | np.ndarray:
    """Scalar in, float out; array in, array out."""
    return float(values) if np.ndim(like) == 0 else values


def _pvap_raw(corr: _Correlation, t: np.ndarray) -> np.ndarray:
    """Vapour pressure of the base fluid (Pa) from DIPPR eq. 101 or Wagner 2.5-5."""
    if corr.pvap_form == "dippr101":
        c1, c2, c3, c4 = corr.pvap_coef
        return np.exp(c1 + c2 / t + c3 * np.log(t) + c4 * t)
    a, b, c, d, tc, pc = corr.pvap_coef
    tr = t / tc
    tau = 1.0 - tr
    return pc * np.exp((a * tau + b * tau**1.5 + c * tau**2.5 + d * tau**5) / tr)


def _mon_factors(name: str) -> tuple[float, float]:
    """(density, vapour-pressure) multipliers of a MON grade relative to NTO; (1, 1) otherwise."""
    x = _MON_NO_PERCENT.get(name)
    if x is None:
        return 1.0, 1.0
    rho_nto_20c = _NTO.rho_ref + _NTO.slope * (293.15 - _NTO.t_ref_k)
    p_nto_20c = float(_pvap_raw(_NTO, np.asarray(293.15)))
    rho_per_percent = (MON10_RHO_20C / rho_nto_20c - 1.0) / 10.0
    pvap_per_percent = (MON10_PVAP_20C_PA / p_nto_20c - 1.0) / 10.0
    return 1.0 + rho_per_percent * x, 1.0 + pvap_per_percent * x


def liquid_density(fluid: str, temperature_k: float | np.ndarray) -> float | np.ndarray:
    """Saturated-liquid density in kg/m3 at temperature_k (float or array)."""
    name, corr = _lookup(fluid)
    t = _checked_temperature(name, corr, temperature_k, "density")
    rho = (corr.rho_ref + corr.slope * (t - corr.t_ref_k)) * _mon_factors(name)[0]
    return _out(rho, temperature_k)


def vapour_pressure(fluid: str, temperature_k: float | np.ndarray) -> float | np.ndarray:
    """Vapour pressure in Pa at temperature_k (float or array)."""
    name, corr = _lookup(fluid)
    t = _checked_temperature(name, corr, temperature_k, "vapour pressure")
    return _out(_pvap_raw(corr, t) * _mon_factors(name)[1], temperature_k)


def density_sigma_rel(fluid: str) -> float:
    """1-sigma relative uncertainty of the density correlation (e.g. 0.002 = 0.2 %)."""
    return _lookup(fluid)[1].density_sigma_rel


def vapour_pressure_sigma_rel(fluid: str) -> float:
    """1-sigma relative uncertainty of the vapour-pressure correlation."""
    return _lookup(fluid)[1].pvap_sigma_rel


def valid_range_k(fluid: str) -> tuple[float, float]:
    """(min, max) temperature in K where both correlations of this liquid may be used."""
    corr = _lookup(fluid)[1]
    return corr.t_min_k, corr.t_max_k
