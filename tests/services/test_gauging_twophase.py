"""Gauging a xenon tank near its critical point and on its saturation line; the pressurant's temperature
offset in a blowdown tank.

Invented test craft. Outside references, each named beside its check:
- xenon critical point Tc = 289.733 K, pc = 5.842 MPa: Lemmon & Span (2006), "Short fundamental equations
  of state for 20 industrial fluids", J. Chem. Eng. Data 51, 785, as listed in the NIST Chemistry WebBook
  (xenon, fluid properties) and CoolProp's fluid page (from memory);
- saturation densities and single-phase densities: CoolProp 8.0.0 PropsSI called directly here (a reference
  library; the product's path is services.gauging -> core.gauging -> ledger.realgas);
- the pressurant offset: first-order propagation through the ideal-gas law V_u = m R T / p (textbook law;
  helium at 22 bar is within 1 % of ideal, Z = 1.0107 by CoolProp 8.0.0).
"""
import math
from dataclasses import replace

import CoolProp
import numpy as np
import pytest
from CoolProp.CoolProp import PropsSI

from ledger.core import liquids
from ledger.core.craft import Craft, Engine, Pressurant, Tank
from ledger.core.gauging import GaugeSigmas, Saturation, TwoPhaseGauge, blowdown_estimate, gas_stored_estimate
from ledger.errors import InputError
from ledger.services import gauging
from ledger.services.ledger import Ledger, create
from tests.helpers import T0

V_XE = 0.015  # m3
CRAFT = Craft("Test xenon", 300.0,
              (Tank("xe", "xenon", 20.0, 0.2, volume_m3=V_XE),
               Tank("hz", "hydrazine", 60.0, 0.5, volume_m3=0.0800,
                    pressurant=Pressurant("helium", 2.2e6 + liquids.vapour_pressure("hydrazine", 293.15), 293.15))),
              (Engine("hall", 1600.0, 0.05, {"xe": 1.0}), Engine("thr", 220.0, 22.0, {"hz": 1.0})))


@pytest.fixture()
def led(tmp_path):
    path = str(tmp_path / "xe.json")
    create(path, CRAFT, by="test")
    ledger = Ledger(path)
    ledger.record("use", {"engine": "hall", "propellant": 1.0}, at=T0, by="test")
    ledger.record("burn", {"engine": "thr", "propellant": 20.0}, at=T0, by="test")
    return ledger


def test_coolprop_version_named():
    assert CoolProp.__version__.startswith("8.0")


def test_xenon_critical_point_against_published_values():
    from ledger import realgas

    sat = realgas.saturation("xenon")
    # Lemmon & Span 2006 / NIST Chemistry WebBook (from memory): Tc 289.733 K, pc 5.842 MPa.
    assert sat.critical_temperature_k == pytest.approx(289.733, abs=0.001)
    assert sat.critical_pressure_pa == pytest.approx(5.842e6, rel=2e-4)


@pytest.mark.parametrize("t", [280.0, 285.0, 289.0])
def test_two_phase_reading_gives_the_saturation_range(led, t):
    p = PropsSI("P", "T", t, "Q", 0, "Xenon") + 2e3  # on the line to well within the 100 kPa sensor sigma
    r = gauging.gauge_reading(led.snapshot(), "xe", p, t, at=T0 + 3600)
    assert r["phase"] == "two-phase" and "propellant_kg" not in r and "sigma_kg" not in r
    # CoolProp 8.0.0 directly: rho_vapour(T) * V and rho_liquid(T) * V.
    assert r["min_kg"] == pytest.approx(PropsSI("D", "T", t, "Q", 1, "Xenon") * V_XE, rel=1e-9)
    assert r["max_kg"] == pytest.approx(PropsSI("D", "T", t, "Q", 0, "Xenon") * V_XE, rel=1e-9)
    assert "fixes no value to adopt" in r["rebaseline_refused"]


def test_two_phase_reading_is_recorded_and_cannot_be_adopted(led):
    t = 285.0
    p = PropsSI("P", "T", t, "Q", 0, "Xenon")
    out = gauging.record_gauge(led, "xe", p, t, at=T0 + 3600, by="test")
    assert out["id"] is not None and out["phase"] == "two-phase"
    with pytest.raises(InputError, match="two-phase"):
        gauging.record_rebaseline(led, "xe", out["id"], "test")


def test_reading_at_the_critical_point_is_sampled_not_refused(led):
    # Was refused with a NaN before: the samples straddle the saturation line and the critical point.
    p, t = 5.842e6, 289.733
    r = gauging.gauge_reading(led.snapshot(), "xe", p, t, at=T0 + 3600)
    assert r.get("phase") != "two-phase"
    assert r["propellant_kg"] == pytest.approx(PropsSI("D", "P", p, "T", t, "Xenon") * V_XE, rel=1e-9)  # CoolProp 8.0.0
    assert math.isfinite(r["sigma_kg"]) and r["sigma_kg"] > 0.05 * r["propellant_kg"]  # steep near Tc: wide
    lo, hi = r["details"]["interval_95_kg"]
    # the sampled range spans most of the vapour-to-liquid range at 289 K (CoolProp 8.0.0 directly)
    assert lo < PropsSI("D", "T", 289.0, "Q", 1, "Xenon") * V_XE < PropsSI("D", "T", 289.0, "Q", 0, "Xenon") * V_XE < hi
    assert r["details"]["unusable_samples"] == 0


def test_reading_just_below_tc_one_and_a_half_sigma_from_the_line_has_a_finite_spread(led):
    t = 289.0
    p = PropsSI("P", "T", t, "Q", 0, "Xenon") + 1.5 * 100e3
    r = gauging.gauge_reading(led.snapshot(), "xe", p, t, at=T0 + 3600)
    assert r.get("phase") != "two-phase" and math.isfinite(r["sigma_kg"])


def test_solid_xenon_is_one_line_error(led):
    with pytest.raises(InputError, match="triple point"):
        gauging.gauge_reading(led.snapshot(), "xe", 1e5, 150.0, at=T0 + 3600)


def test_samples_on_the_saturation_line_take_a_fill_between_vapour_and_liquid():
    # Synthetic property functions (invented): saturation at 5 MPa below Tc = 300 K, liquid 1000 kg/m3,
    # vapour 100 kg/m3; the density function gives NaN on the line (as CoolProp does) and 500 elsewhere.
    sat = Saturation(300.0, 6e6, 150.0, lambda t: (np.full(np.size(t), 5e6), np.full(np.size(t), 1000.0),
                                                   np.full(np.size(t), 100.0)))

    def density(p, t):
        p = np.asarray(p, dtype=float)
        return np.where(np.abs(p - 5e6) < 2e4, np.nan, 500.0) if p.ndim else 500.0

    s = replace(GaugeSigmas.zero(), pressure_pa=1e5)
    g = gas_stored_estimate(1.0, 5.2e6, 290.0, density, s, n_samples=20_000, saturation=sat)
    assert not isinstance(g, TwoPhaseGauge)
    # P(|p_s - 5 MPa| < 20 kPa) with p_s ~ N(5.2 MPa, 0.1 MPa): Phi(-1.8) - Phi(-2.2), about 2.2 % of samples
    assert 200 < g.two_phase_samples < 700 and g.unusable_samples == 0
    assert math.isfinite(g.sigma_kg) and g.sigma_kg > 0
    on_line = gas_stored_estimate(1.0, 5.0e6, 290.0, density, s, saturation=sat)
    assert isinstance(on_line, TwoPhaseGauge) and (on_line.min_kg, on_line.max_kg) == (100.0, 1000.0)


def test_pressurant_offset_enters_the_blowdown_sigma_as_the_ideal_gas_law_says():
    # Only the pressurant's temperature about the wall is uncertain (1 K). Ideal gas: V_u = m R T_gas / p_gas,
    # so dm = rho_l dV_u = rho_l V_u dT/T: sigma_m = rho_l * V_u * 1 K / T (first order).
    from ledger import realgas

    rho_l = lambda t: liquids.liquid_density("hydrazine", t)  # noqa: E731
    p_vap = lambda t: liquids.vapour_pressure("hydrazine", t)  # noqa: E731
    gas = lambda p, t: realgas.gas_density("helium", p, t)  # noqa: E731
    s = replace(GaugeSigmas.zero(), gas_temperature_offset_k=1.0)
    g = blowdown_estimate(0.08, 60.0, 293.15, 2.2e6, 1.0e6, 303.15, rho_l, p_vap, gas, s, n_samples=20_000)
    expected = g.liquid_density_kg_m3 * g.ullage_m3 * 1.0 / 303.15
    assert g.sigma_kg == pytest.approx(expected, rel=0.05)
    zero = blowdown_estimate(0.08, 60.0, 293.15, 2.2e6, 1.0e6, 303.15, rho_l, p_vap, gas, GaugeSigmas.zero())
    assert zero.sigma_kg < 1e-9 and zero.propellant_kg == g.propellant_kg


def test_pressurant_offset_default_follows_the_last_firing(led):
    snap = led.snapshot()
    soon = gauging.gauge_reading(snap, "hz", 1.0e6, 303.15, at=T0 + 3600)  # an hour after the burn
    later = gauging.gauge_reading(snap, "hz", 1.0e6, 303.15, at=T0 + 2 * 86400)
    assert soon["sigmas"]["gas_temperature_offset_k"] == gauging.GAS_OFFSET_AFTER_BURN_K == 1.0
    assert later["sigmas"]["gas_temperature_offset_k"] == gauging.GAS_OFFSET_SETTLED_K == 0.5
    assert soon["sigma_kg"] > later["sigma_kg"]
    given = gauging.gauge_reading(snap, "hz", 1.0e6, 303.15, at=T0 + 3600,
                                  sigmas=gauging.default_sigmas(CRAFT.tanks[1], gas_temperature_offset_k=2.0))
    assert given["sigmas"]["gas_temperature_offset_k"] == 2.0 and given["sigma_kg"] > soon["sigma_kg"]
    with pytest.raises(InputError, match="gas-stored"):
        gauging.default_sigmas(CRAFT.tanks[0], gas_temperature_offset_k=1.0)


def test_handover_shows_a_two_phase_range_without_empty_figures(led):
    """The handover's gauge line of a two-phase reading names the range and no estimate (it said 'sigma
    None'); the saturation pressure is CoolProp 8.0.0's, called directly."""
    from ledger.services import handover  # noqa: PLC0415

    t = 285.0
    gauging.record_gauge(led, "xe", PropsSI("P", "T", t, "Q", 0, "Xenon"), t, at=T0 + 3600, by="test")
    report = handover.assemble(led, from_name="A. Day", to_name="B. Night")
    line = next(g["summary"] for g in report["gauge"] if g["tank"] == "xe")
    assert "two-phase" in line and "min kg" in line and "max kg" in line
    assert "None" not in line
