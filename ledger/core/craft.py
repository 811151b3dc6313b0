"""The spacecraft as the ledger sees it: dry mass, tanks, engines and reserves, all in SI floats.

Parsing text and units happens elsewhere (``ledger.units``, ``ledger.services.craftfile``); this module
only holds validated numbers and the derived quantities every replay needs (exhaust velocity, feed
fractions), so the maths never has to look anything up by name.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np

G0 = 9.80665
"""Standard gravity in m/s^2, exact by definition (3rd CGPM, 1901)."""


@dataclass(frozen=True)
class Pressurant:
    """Loading conditions of a blowdown tank's pressurant gas (fix the initial ullage)."""

    gas: str
    pressure_pa: float
    temperature_k: float


@dataclass(frozen=True)
class GasTable:
    """A blowdown tank's pressurant: its mass (fixed at loading) and compressibility Z(density, T).

    Tabulated once by a shell with a real-gas library (``ledger.realgas.gas_table``) on uniform grids,
    so the core interpolates it with numpy and never loads the property library. ``ideal`` marks the
    fallback Z = 1 used when a stored craft predates the table."""

    gas: str
    gas_kg: float
    molar_mass_kg_mol: float
    density0: float
    density_step: float
    temperature0_k: float
    temperature_step_k: float
    z: tuple[tuple[float, ...], ...]
    """Rows by temperature, columns by density."""
    ideal: bool = False


@dataclass(frozen=True)
class Performance:
    """Steady-state thrust and Isp against feed pressure, interpolated linearly (end values outside)."""

    pressure_pa: tuple[float, ...]
    thrust_n: tuple[float, ...]
    isp_s: tuple[float, ...]


@dataclass(frozen=True)
class ImpulseBit:
    """Impulse per pulse against the commanded on-time (I_bit = the integral of F dt over one pulse),
    measured at one feed pressure; interpolated linearly in on-time, the end values outside the table.

    ``reference_thrust_n`` is the steady-state thrust at that feed pressure: a pulse train's impulse bit
    follows the feed pressure as thrust(p)/reference_thrust_n (engines with a performance table only)."""

    on_time_s: tuple[float, ...]
    impulse_ns: tuple[float, ...]
    reference_thrust_n: float
    pressure_pa: float | None = None
    """Feed pressure the table was measured at (engines with a performance table); None: no pressure model."""

    def impulse(self, on_time_s) -> np.ndarray:
        return np.interp(on_time_s, self.on_time_s, self.impulse_ns)

    def outside(self, on_time_s: float) -> bool:
        return not self.on_time_s[0] <= on_time_s <= self.on_time_s[-1]


@dataclass(frozen=True)
class Tank:
    id: str
    fluid: str
    load_kg: float
    residual_kg: float = 0.0
    volume_m3: float | None = None
    pressurant: Pressurant | None = None
    load_sigma_kg: float | None = None
    expansion: float = 1.0
    """Polytropic exponent of the pressurant during a firing: 1.0 isothermal .. 1.667 adiabatic helium."""
    gas_table: GasTable | None = None

    @property
    def blowdown(self) -> bool:
        """A tank with a volume and a pressurant: its pressure falls as propellant is drawn."""
        return self.volume_m3 is not None and self.pressurant is not None


@dataclass(frozen=True)
class Engine:
    id: str
    isp_s: float
    thrust_n: float
    feeds: Mapping[str, float]
    cant_deg: float = 0.0
    isp_sigma_s: float | None = None
    thrust_sigma_n: float | None = None
    performance: Performance | None = None
    """Thrust and Isp against feed pressure; ``isp_s``/``thrust_n`` then hold the values at loading."""
    qualified_pressure_pa: tuple[float, float] | None = None
    pulse_isp_factor: float = 1.0
    """Pulse-mode Isp as a share of steady state (craft file ``pulse: {isp_factor: 0.75}``); 1 = none given."""
    life: Mapping[str, float] | None = None
    """Qualified life limits (``pulses``, ``throughput_kg``, ``on_time_s``), any of them; None = none given."""
    mixture_ratio_sigma: float | None = None
    """One sigma of the mixture ratio as flown: the first feed's mass parts over the second's (two feeds only)."""
    impulse_bit: ImpulseBit | None = None
    """Impulse per pulse against on-time (craft file ``pulse: {impulse_bit: ...}``); None = pulses at steady flow."""

    def pulse_on_time_scale(self, on_time_s) -> np.ndarray:
        """Steady-state seconds per second of pulse on-time: a train of N pulses of T draws what N x T x this
        seconds of steady firing draw. With an impulse-bit table: I_bit(T) / (T x F_ref x isp_factor), so the
        draw is N x I_bit(T) / (Isp_pulse g0) with Isp_pulse = isp_factor x steady-state Isp (times
        thrust(p)/F_ref under a performance table). Without one: 1 (the valve passes the steady flow)."""
        t = np.asarray(on_time_s, dtype=float)
        if self.impulse_bit is None:
            return np.ones(t.shape)
        ib = self.impulse_bit
        with np.errstate(divide="ignore", invalid="ignore"):
            out = ib.impulse(t) / (t * ib.reference_thrust_n * self.pulse_isp_factor)
        return np.where(t > 0, out, 1.0)

    @property
    def mixture_ratio(self) -> float | None:
        """The first feed's mass parts over the second's, for an engine with exactly two feeds."""
        if len(self.feeds) != 2:
            return None
        first, second = self.feeds.values()
        return first / second

    @property
    def ve(self) -> float:
        """Effective exhaust velocity along the burn direction: Isp·g0·cos(cant)."""
        return self.isp_s * G0 * math.cos(math.radians(self.cant_deg))

    @property
    def mass_flow(self) -> float:
        """Propellant flow in kg/s while firing: thrust/(Isp·g0); the cant does not reduce it."""
        return self.thrust_n / (self.isp_s * G0)


@dataclass(frozen=True)
class Reserve:
    id: str
    engine: str
    dv_m_s: float


@dataclass(frozen=True)
class Routine:
    """Delta-v an engine spends per year in routine operations (station keeping, drag make-up)."""

    engine: str
    dv_per_year_m_s: float


@dataclass(frozen=True)
class Craft:
    name: str
    dry_mass_kg: float
    tanks: tuple[Tank, ...]
    engines: tuple[Engine, ...]
    reserves: tuple[Reserve, ...] = ()
    routine: tuple[Routine, ...] = ()
    dry_mass_sigma_kg: float | None = None
    extra: Mapping[str, Any] = field(default_factory=dict)

    # --- lookups -------------------------------------------------------------------------
    @property
    def tank_ids(self) -> list[str]:
        return [t.id for t in self.tanks]

    @property
    def engine_ids(self) -> list[str]:
        return [e.id for e in self.engines]

    def tank_index(self, tank_id: str) -> int:
        return self.tank_ids.index(tank_id)

    def engine_index(self, engine_id: str) -> int:
        return self.engine_ids.index(engine_id)

    def engine(self, engine_id: str) -> Engine:
        return self.engines[self.engine_index(engine_id)]

    # --- arrays the replay works on --------------------------------------------------------
    def loads(self) -> np.ndarray:
        return np.array([t.load_kg for t in self.tanks], dtype=float)

    def residuals(self) -> np.ndarray:
        return np.array([t.residual_kg for t in self.tanks], dtype=float)

    def ve(self) -> np.ndarray:
        return np.array([e.ve for e in self.engines], dtype=float)

    def mass_flows(self) -> np.ndarray:
        return np.array([e.mass_flow for e in self.engines], dtype=float)

    def feed_fractions(self) -> np.ndarray:
        """Matrix engines x tanks: the share of each kilogram an engine draws from each tank."""
        frac = np.zeros((len(self.engines), len(self.tanks)))
        ids = self.tank_ids
        for i, eng in enumerate(self.engines):
            total = sum(eng.feeds.values())
            for tank_id, parts in eng.feeds.items():
                frac[i, ids.index(tank_id)] = parts / total
        return frac

    @property
    def has_impulse_bits(self) -> bool:
        return any(e.impulse_bit is not None for e in self.engines)

    @property
    def has_tables(self) -> bool:
        """Any engine with performance against feed pressure (the replay is then not affine)."""
        return any(e.performance is not None for e in self.engines)

    @property
    def initial_mass_kg(self) -> float:
        return self.dry_mass_kg + float(self.loads().sum())
