"""PVT gauging: tank pressure and temperature -> propellant mass with a 1-sigma uncertainty.

Why the property functions are arguments: core stays pure (no CoolProp import); the shell
binds CoolProp or an ideal gas, and a liquid correlation, to plain callables.
Why Monte Carlo: the blowdown estimate is non-linear (error grows as V_u/V_l grows, xenon
density is steep near its critical point), so sensor and model errors are sampled, not
linearised. The reported mass is the nominal (noise-free) value; sigma is the sample spread.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, fields

import numpy as np

from ledger.core.reconcile import Reconciliation, inverse_variance, reconcile

Number = float | np.ndarray
LiquidFn = Callable[[Number], Number]  # temperature_k -> kg/m3 or Pa
GasFn = Callable[[Number, Number], Number]  # (pressure_pa, temperature_k) -> kg/m3

__all__ = [
    "BlowdownGauge", "GasGauge", "GaugeSigmas", "Reconciliation", "Saturation", "TwoPhaseGauge",
    "blowdown_estimate", "gas_stored_estimate", "inverse_variance", "reconcile",
]

MAX_REJECTED_FRACTION = 0.001  # Monte Carlo draws that are physically impossible


@dataclass(frozen=True)
class GaugeSigmas:
    """1-sigma uncertainties sampled by the Monte Carlo.

    Defaults are common practice, not a standard: flight pressure transducers are specified
    at about +-0.5 % of full scale, taken here as 1 sigma of a 3 MPa range (15 kPa); the same
    transducer reads the loading pressure at pressurisation. Tank-wall temperature sensors
    +-0.5 K, including the wall-to-bulk difference. Tank volume from water-fill calibration
    0.1 % (stretch not modelled). Loaded mass 0.1 % by weighing (docs/sources.md §4, from
    memory). Liquid density 0.2 % and vapour pressure 3 %: pass the fluid's own values from
    ledger.core.liquids. Gas density 0.2 % (reference equations of state for He, N2, Ar,
    Kr, Xe, from memory); used only for gas-stored tanks, because in a blowdown tank a common
    equation-of-state scale error cancels between loading and reading.
    """

    pressure_pa: float = 15.0e3
    temperature_k: float = 0.5
    load_pressure_pa: float = 15.0e3
    load_temperature_k: float = 0.5
    tank_volume_rel: float = 0.001
    loaded_mass_rel: float = 0.001
    liquid_density_rel: float = 0.002
    vapour_pressure_rel: float = 0.03
    gas_density_rel: float = 0.002
    gas_temperature_offset_k: float | None = None
    """One sigma of the blowdown pressurant's temperature about the wall sensor's reading (the gas can lag
    or lead the wall, most after a firing). None: the shell picks its default (services.gauging); 0 here."""

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if value is None and f.name == "gas_temperature_offset_k":
                continue
            if not (isinstance(value, (int, float)) and math.isfinite(value) and value >= 0.0):
                raise ValueError(f"sigma {f.name} must be a finite number >= 0; got {value!r}")

    @classmethod
    def from_transducer(
        cls, full_scale_pa: float, accuracy_fs: float = 0.005, **overrides: float
    ) -> GaugeSigmas:
        """Pressure sigmas from a transducer's full scale and accuracy (fraction of FS)."""
        p = accuracy_fs * full_scale_pa
        return cls(**{"pressure_pa": p, "load_pressure_pa": p, **overrides})

    @classmethod
    def zero(cls) -> GaugeSigmas:
        """No uncertainty at all: the Monte Carlo then reproduces the nominal value."""
        return cls(**{f.name: 0.0 for f in fields(cls)})


class _Estimate:
    """What every gauge estimate offers beside its fields (propellant_kg and sigma_kg)."""

    propellant_kg: float
    sigma_kg: float

    @property
    def relative_sigma(self) -> float:
        return self.sigma_kg / self.propellant_kg if self.propellant_kg else math.inf


@dataclass(frozen=True)
class BlowdownGauge(_Estimate):
    """Blowdown-tank PVT estimate and the intermediate values behind it (SI units)."""

    propellant_kg: float
    sigma_kg: float
    liquid_volume_m3: float
    ullage_m3: float
    initial_ullage_m3: float
    pressurant_kg: float
    gas_pressure_pa: float
    vapour_pressure_pa: float
    liquid_density_kg_m3: float
    gas_density_kg_m3: float
    mc_mean_kg: float
    samples: int
    seed: int


@dataclass(frozen=True)
class GasGauge(_Estimate):
    """Gas-stored tank estimate (m = rho_g(P, T) * V) and its inputs (SI units)."""

    propellant_kg: float
    sigma_kg: float
    gas_density_kg_m3: float
    tank_volume_m3: float
    mc_mean_kg: float
    samples: int
    seed: int
    two_phase_samples: int = 0
    """Samples that fell on the saturation line (a fill drawn between vapour and liquid for each)."""
    unusable_samples: int = 0
    """Samples the equation of state gave no density for (left out, counted; few or the reading is refused)."""
    interval_95_kg: tuple[float, float] | None = None
    """2.5 % and 97.5 % points of the sampled mass: near the critical point the spread is far from Gaussian."""


def _positive(name: str, value: float) -> float:
    v = float(value)
    if not (math.isfinite(v) and v > 0.0):
        raise ValueError(f"{name} must be a finite number > 0; got {value!r}")
    return v


def _check_samples(n_samples: int) -> int:
    if isinstance(n_samples, bool) or not isinstance(n_samples, int) or n_samples < 2:
        raise ValueError(f"n_samples must be an integer >= 2; got {n_samples!r}")
    return n_samples


def _clip(t: np.ndarray, limits: tuple[float, float] | None) -> np.ndarray:
    """Keep sampled temperatures inside the correlation's range (the nominal must already be)."""
    return t if limits is None else np.clip(t, limits[0], limits[1])


def _require_mostly_valid(ok: np.ndarray, what: str) -> None:
    """Refuse a run where too many draws are physically impossible (dropping them biases)."""
    rejected = int(ok.size - np.count_nonzero(ok))
    if rejected > MAX_REJECTED_FRACTION * ok.size:
        raise ValueError(
            f"{what}: {100.0 * rejected / ok.size:.2f} % of Monte Carlo draws give no ullage "
            "or non-positive gas pressure; the reading is too close to a physical limit for PVT"
        )


def blowdown_estimate(
    tank_volume_m3: float,
    loaded_kg: float,
    load_temperature_k: float,
    load_gas_pressure_pa: float,
    pressure_pa: float,
    temperature_k: float,
    liquid_density: LiquidFn,
    vapour_pressure: LiquidFn,
    gas_density: GasFn,
    sigmas: GaugeSigmas = GaugeSigmas(),
    n_samples: int = 20_000,
    seed: int = 0,
    temperature_limits_k: tuple[float, float] | None = None,
) -> BlowdownGauge:
    """Propellant left in a blowdown tank from its loading record and a P, T reading.

    docs/sources.md §4: V_u0 = V - m0/rho_l(T0); m_gas = rho_g(P0, T0) * V_u0;
    P_gas = P - p_vap(T); V_u = m_gas / rho_g(P_gas, T); m = rho_l(T) * (V - V_u).
    load_gas_pressure_pa is the pressurant's own pressure at loading (subtract p_vap(T0) from
    a tank reading first). temperature_limits_k, if given, clips sampled temperatures to the
    liquid correlation's range so that sensor noise at its edge does not abort the run.
    """
    v = _positive("tank volume", tank_volume_m3)
    m0 = _positive("loaded propellant mass", loaded_kg)
    t0 = _positive("loading temperature", load_temperature_k)
    p0 = _positive("loading gas pressure", load_gas_pressure_pa)
    p = _positive("tank pressure", pressure_pa)
    t = _positive("tank temperature", temperature_k)
    n = _check_samples(n_samples)

    rho_l0 = float(liquid_density(t0))
    v_u0 = v - m0 / rho_l0
    if v_u0 <= 0.0:
        raise ValueError(
            f"no initial ullage: {m0:g} kg at {rho_l0:.1f} kg/m3 fills {m0 / rho_l0:.6g} m3 "
            f"of a {v:.6g} m3 tank"
        )
    m_gas = float(gas_density(p0, t0)) * v_u0
    p_vap = float(vapour_pressure(t))
    p_gas = p - p_vap
    if p_gas <= 0.0:
        raise ValueError(
            f"tank pressure {p:.6g} Pa is not above the propellant vapour pressure {p_vap:.6g} Pa"
        )
    rho_g = float(gas_density(p_gas, t))
    v_u = m_gas / rho_g
    if v_u >= v:
        raise ValueError(
            f"computed ullage {v_u:.6g} m3 is not below the tank volume {v:.6g} m3 "
            "(negative liquid volume): the reading implies an empty tank or inconsistent inputs"
        )
    rho_l = float(liquid_density(t))
    mass = rho_l * (v - v_u)

    z = np.random.default_rng(seed).standard_normal((8, n))
    s = sigmas
    v_s = v * (1.0 + s.tank_volume_rel * z[0])
    m0_s = m0 * (1.0 + s.loaded_mass_rel * z[1])
    t0_s = _clip(t0 + s.load_temperature_k * z[2], temperature_limits_k)
    p0_s = p0 + s.load_pressure_pa * z[3]
    p_s = p + s.pressure_pa * z[4]
    t_s = _clip(t + s.temperature_k * z[5], temperature_limits_k)
    k_liquid = 1.0 + s.liquid_density_rel * z[6]  # same correlation at T0 and T: correlated
    k_vap = 1.0 + s.vapour_pressure_rel * z[7]
    # The pressurant's own temperature about the wall sensor's (drawn after the others, so a zero offset
    # keeps every other sample as it was); the liquid and its vapour pressure stay at the wall's.
    offset = s.gas_temperature_offset_k or 0.0
    t_gas_s = t_s + offset * np.random.default_rng([seed, 1]).standard_normal(n) if offset else t_s

    v_u0_s = v_s - m0_s / (k_liquid * np.asarray(liquid_density(t0_s), dtype=float))
    p_gas_s = p_s - k_vap * np.asarray(vapour_pressure(t_s), dtype=float)
    ok = (v_u0_s > 0.0) & (p_gas_s > 0.0) & (p0_s > 0.0)
    _require_mostly_valid(ok, "blowdown estimate")
    m_gas_s = np.asarray(gas_density(p0_s[ok], t0_s[ok]), dtype=float) * v_u0_s[ok]
    v_u_s = m_gas_s / np.asarray(gas_density(p_gas_s[ok], t_gas_s[ok]), dtype=float)
    mass_s = k_liquid[ok] * np.asarray(liquid_density(t_s[ok]), dtype=float) * (v_s[ok] - v_u_s)

    return BlowdownGauge(
        propellant_kg=mass, sigma_kg=float(np.std(mass_s, ddof=1)),
        liquid_volume_m3=v - v_u, ullage_m3=v_u,
        initial_ullage_m3=v_u0, pressurant_kg=m_gas, gas_pressure_pa=p_gas,
        vapour_pressure_pa=p_vap, liquid_density_kg_m3=rho_l, gas_density_kg_m3=rho_g,
        mc_mean_kg=float(np.mean(mass_s)), samples=int(mass_s.size), seed=seed,
    )


@dataclass(frozen=True)
class Saturation:
    """A stored gas's saturation line and critical point, bound by the shell (ledger.realgas, CoolProp).

    ``curve(T)`` gives arrays (p_sat, rho_liquid, rho_vapour) for an array of temperatures, NaN at or
    above the critical temperature or below the triple point."""

    critical_temperature_k: float
    critical_pressure_pa: float
    triple_temperature_k: float
    curve: Callable[[np.ndarray], tuple[np.ndarray, np.ndarray, np.ndarray]]

    def at(self, temperature_k: float) -> tuple[float, float, float]:
        p, rho_l, rho_v = self.curve(np.array([float(temperature_k)]))
        return float(p[0]), float(rho_l[0]), float(rho_v[0])


@dataclass(frozen=True)
class TwoPhaseGauge:
    """A gas-stored tank read on its saturation line: liquid and vapour coexist, and P and T fix no mass.

    Any fill between all vapour and all liquid gives the same reading, so there is no point estimate
    and no sigma, only the range rho_vapour·V to rho_liquid·V."""

    min_kg: float
    max_kg: float
    saturation_pressure_pa: float
    liquid_density_kg_m3: float
    vapour_density_kg_m3: float
    tank_volume_m3: float
    pressure_from_saturation_sigma: float
    """(p - p_sat(T)) over the reading's sigma projected on p - p_sat (pressure and temperature sigmas)."""
    critical_temperature_k: float
    critical_pressure_pa: float


TWO_PHASE_SIGMAS = 1.0
"""A reading below Tc within this many sigmas of the saturation pressure is reported as two-phase: the
sensors cannot tell it from a tank in which liquid and vapour coexist (issue 12, point 5)."""


def two_phase_reading(p: float, t: float, sigmas: GaugeSigmas, sat: Saturation) -> tuple[bool, float, tuple]:
    """Whether (p, t) is within TWO_PHASE_SIGMAS of the saturation line, the distance in sigmas, and
    (p_sat, rho_l, rho_v) at t. The sigma combines the pressure sensor's with the saturation pressure's
    shift over the temperature sigma (dp_sat/dT by a central difference)."""
    if not (sat.triple_temperature_k <= t < sat.critical_temperature_k):
        return False, math.inf, (math.nan, math.nan, math.nan)
    p_sat, rho_l, rho_v = sat.at(t)
    if not math.isfinite(p_sat):
        return False, math.inf, (p_sat, rho_l, rho_v)
    h = min(0.01, 0.5 * (sat.critical_temperature_k - t), 0.5 * (t - sat.triple_temperature_k)) or 1e-6
    hi, lo = sat.curve(np.array([t + h, t - h]))[0]
    slope = float((hi - lo) / (2 * h)) if math.isfinite(hi) and math.isfinite(lo) else 0.0
    spread = math.hypot(sigmas.pressure_pa, slope * sigmas.temperature_k)
    distance = (p - p_sat) / spread if spread > 0 else (0.0 if p == p_sat else math.copysign(math.inf, p - p_sat))
    return abs(distance) <= TWO_PHASE_SIGMAS, distance, (p_sat, rho_l, rho_v)


def gas_stored_estimate(
    tank_volume_m3: float,
    pressure_pa: float,
    temperature_k: float,
    gas_density: GasFn,
    sigmas: GaugeSigmas = GaugeSigmas(),
    n_samples: int = 20_000,
    seed: int = 0,
    saturation: Saturation | None = None,
) -> GasGauge | TwoPhaseGauge:
    """Gas propellant (xenon, krypton, cold-gas nitrogen) in a tank: m = rho_g(P, T) * V.

    With the gas's ``saturation`` line: a reading below Tc within TWO_PHASE_SIGMAS of the saturation
    pressure gives a ``TwoPhaseGauge`` (a range, no point estimate). Otherwise the sigma comes from the
    samples; ``gas_density`` may return NaN for a sample it cannot flash: a sample below Tc on the
    saturation line is two-phase and takes a fill drawn uniformly between vapour and liquid (any fill
    fits it equally; project choice), counted in ``two_phase_samples``; any other is counted in
    ``unusable_samples`` and more than MAX_REJECTED_FRACTION of them refuse the reading.
    """
    v = _positive("tank volume", tank_volume_m3)
    p = _positive("tank pressure", pressure_pa)
    t = _positive("tank temperature", temperature_k)
    n = _check_samples(n_samples)
    s = sigmas
    if saturation is not None:
        if t < saturation.triple_temperature_k:
            raise ValueError(f"tank temperature {t:.2f} K is below the triple point ({saturation.triple_temperature_k:.2f} K): "
                             "the propellant would be solid; no PVT estimate")
        inside, distance, (p_sat, rho_l, rho_v) = two_phase_reading(p, t, s, saturation)
        if inside:
            return TwoPhaseGauge(min_kg=rho_v * v, max_kg=rho_l * v, saturation_pressure_pa=p_sat,
                                 liquid_density_kg_m3=rho_l, vapour_density_kg_m3=rho_v, tank_volume_m3=v,
                                 pressure_from_saturation_sigma=distance,
                                 critical_temperature_k=saturation.critical_temperature_k,
                                 critical_pressure_pa=saturation.critical_pressure_pa)
    rho = float(gas_density(p, t))
    if not (math.isfinite(rho) and rho > 0.0):
        raise ValueError(f"no density at {p:.6g} Pa, {t:.6g} K from the equation of state")
    mass = rho * v

    rng = np.random.default_rng(seed)
    z = rng.standard_normal((4, n))
    v_s = v * (1.0 + s.tank_volume_rel * z[0])
    p_s = p + s.pressure_pa * z[1]
    t_s = t + s.temperature_k * z[2]
    k_gas = 1.0 + s.gas_density_rel * z[3]
    ok = (p_s > 0.0) & (t_s > 0.0)
    _require_mostly_valid(ok, "gas-stored estimate")
    rho_s = np.asarray(gas_density(p_s[ok], t_s[ok]), dtype=float)
    fill = rng.random(rho_s.size)  # drawn after the normals, so single-phase readings keep their samples
    lost = ~np.isfinite(rho_s)
    two_phase = 0
    if lost.any() and saturation is not None:
        idx = np.flatnonzero(lost)
        _, rl, rv = saturation.curve(t_s[ok][idx])
        on_line = np.isfinite(rl) & np.isfinite(rv)
        rho_s[idx[on_line]] = rv[on_line] + fill[idx[on_line]] * (rl[on_line] - rv[on_line])
        two_phase = int(on_line.sum())
        lost = ~np.isfinite(rho_s)
    unusable = int(lost.sum())
    if unusable > MAX_REJECTED_FRACTION * n:
        raise ValueError(f"{100.0 * unusable / n:.2f} % of Monte Carlo draws get no density from the equation "
                         "of state; the reading is outside what it covers")
    mass_s = (k_gas[ok] * rho_s * v_s[ok])[~lost]
    lo, hi = np.quantile(mass_s, [0.025, 0.975])
    return GasGauge(
        propellant_kg=mass, sigma_kg=float(np.std(mass_s, ddof=1)), gas_density_kg_m3=rho,
        tank_volume_m3=v, mc_mean_kg=float(np.mean(mass_s)), samples=int(mass_s.size), seed=seed,
        two_phase_samples=two_phase, unusable_samples=unusable, interval_95_kg=(float(lo), float(hi)),
    )
