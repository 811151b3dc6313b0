"""PVT gauging: a hand-computed ideal-gas check value, a hand-computed real-helium case, Monte Carlo against
first-order propagation, reproducibility, invalid physics and reconciliation."""

import subprocess
import sys
from pathlib import Path
from dataclasses import FrozenInstanceError, replace
from functools import partial

import numpy as np
import pytest
from scipy.constants import R

from ledger import realgas
from ledger.core import liquids
from ledger.core.gauging import (
    GaugeSigmas,
    blowdown_estimate,
    gas_stored_estimate,
    inverse_variance,
    reconcile,
)

M_HELIUM = 4.002602e-3  # kg/mol, IUPAC standard atomic weight of helium [memory]


def ideal_gas(p, t):
    """Ideal-gas density P*M/(R*T), scipy.constants.R (CODATA)."""
    return p * M_HELIUM / (R * t)


def field_rho(t_k):
    """Hydrazine line through Schmidt's two points: rho = 1025.7 - 0.86*T[degC] (docs/sources.md §5)."""
    return 1025.7 - 0.86 * (t_k - 273.15)


def no_vapour(t_k):
    return 0.0 * np.asarray(t_k, dtype=float)


HYDRAZINE_RHO = partial(liquids.liquid_density, "hydrazine")
HYDRAZINE_PVAP = partial(liquids.vapour_pressure, "hydrazine")
HELIUM = partial(realgas.gas_density, "helium")


def test_field_ideal_gas_check_value():
    # Check value computed by hand (docs/sources.md §4): V_tank 0.700 m3, V_u0 0.100 m3 at 2.4 MPa and
    # 20 degC, read at 1.2 MPa and 30 degC -> V_u = 0.20682 m3, m = 493.13 kg.
    loaded = field_rho(293.15) * 0.600  # fills 0.600 m3, leaving the 0.100 m3 ullage
    g = blowdown_estimate(0.700, loaded, 293.15, 2.4e6, 1.2e6, 303.15,
                          field_rho, no_vapour, ideal_gas)
    assert g.initial_ullage_m3 == pytest.approx(0.100, abs=1e-12)
    assert g.ullage_m3 == pytest.approx(0.20682, abs=5e-6)
    assert g.propellant_kg == pytest.approx(493.13, abs=0.005)
    assert g.liquid_volume_m3 + g.ullage_m3 == pytest.approx(0.700, abs=1e-12)


def test_real_helium_hydrazine_case_computed_by_hand():
    # Invented, physically consistent case, worked step by step:
    #   tank 0.0800 m3, 60.00 kg hydrazine loaded at 20.0 degC, helium to 2.200 MPa gas
    #   pressure at 20.0 degC; later the tank reads 1.000 MPa at 30.0 degC.
    #   rho_l(20 C) = 1025.7 - 0.86*20 = 1008.5 kg/m3; V_l0 = 60/1008.5 = 0.0594943 m3
    #   V_u0 = 0.0800 - 0.0594943 = 0.0205057 m3
    #   rho_He(2.2 MPa, 293.15 K) = 3.574592 kg/m3 (measured with CoolProp 8.0.0; docs/sources.md §6)
    #   m_He = 3.574592 * 0.0205057 = 0.0732995 kg
    #   p_vap(N2H4, 303.15 K) = 2574.5 Pa (Perry's 8th ed. Table 2-8, DIPPR eq. 101)
    #   P_gas = 1 000 000 - 2574.5 = 997 425.5 Pa
    #   rho_He(997 425.5 Pa, 303.15 K) = 1.576545 kg/m3 (CoolProp)
    #   V_u = 0.0732995 / 1.576545 = 0.0464938 m3; V_l = 0.0800 - 0.0464938 = 0.0335062 m3
    #   rho_l(30 C) = 1025.7 - 25.8 = 999.9 kg/m3; m = 999.9 * 0.0335062 = 33.503 kg
    #   (an ideal gas would give V_u = 0.0205057*(2.2e6/997425.5)*(303.15/293.15) = 0.0467718
    #    and m = 33.225 kg: the helium real-gas effect is 0.28 kg here.)
    g = blowdown_estimate(0.0800, 60.00, 293.15, 2.2e6, 1.0e6, 303.15,
                          HYDRAZINE_RHO, HYDRAZINE_PVAP, HELIUM)
    assert g.initial_ullage_m3 == pytest.approx(0.0205057, abs=1e-7)
    assert g.pressurant_kg == pytest.approx(0.0732995, abs=1e-7)
    assert g.vapour_pressure_pa == pytest.approx(2574.5, abs=0.1)
    assert g.gas_pressure_pa == pytest.approx(997425.5, abs=0.1)
    assert g.gas_density_kg_m3 == pytest.approx(1.576545, abs=1e-6)
    assert g.ullage_m3 == pytest.approx(0.0464938, abs=1e-7)
    assert g.liquid_density_kg_m3 == pytest.approx(999.9, abs=1e-9)
    assert g.propellant_kg == pytest.approx(33.503, abs=0.001)
    ideal = blowdown_estimate(0.0800, 60.00, 293.15, 2.2e6, 1.0e6, 303.15,
                              HYDRAZINE_RHO, HYDRAZINE_PVAP, ideal_gas)
    assert ideal.propellant_kg == pytest.approx(33.225, abs=0.001)


def _nominal(**kw):
    """Noise-free blowdown mass for the first-order propagation below."""
    return blowdown_estimate(sigmas=GaugeSigmas.zero(), n_samples=2, **kw).propellant_kg


def test_monte_carlo_sigma_matches_first_order_propagation():
    # For small sigmas the Monte Carlo spread must equal the root-sum-square of
    # (d m / d x_i) * sigma_i, derivatives by central differences [practice: GUM, first order].
    s = replace(GaugeSigmas(), liquid_density_rel=0.002, vapour_pressure_rel=0.02)
    base = dict(tank_volume_m3=0.0800, loaded_kg=60.0, load_temperature_k=293.15,
                load_gas_pressure_pa=2.2e6, pressure_pa=1.0e6, temperature_k=303.15,
                liquid_density=HYDRAZINE_RHO, vapour_pressure=HYDRAZINE_PVAP,
                gas_density=HELIUM)
    steps = {
        "tank_volume_m3": base["tank_volume_m3"] * s.tank_volume_rel,
        "loaded_kg": base["loaded_kg"] * s.loaded_mass_rel,
        "load_temperature_k": s.load_temperature_k,
        "load_gas_pressure_pa": s.load_pressure_pa,
        "pressure_pa": s.pressure_pa,
        "temperature_k": s.temperature_k,
    }
    terms = []
    for key, h in steps.items():
        up = _nominal(**{**base, key: base[key] + h})
        down = _nominal(**{**base, key: base[key] - h})
        terms.append((up - down) / 2.0)
    for key, rel in (("liquid_density", s.liquid_density_rel),
                     ("vapour_pressure", s.vapour_pressure_rel)):
        f = base[key]
        up = _nominal(**{**base, key: lambda t, f=f: (1 + rel) * np.asarray(f(t))})
        down = _nominal(**{**base, key: lambda t, f=f: (1 - rel) * np.asarray(f(t))})
        terms.append((up - down) / 2.0)
    first_order = float(np.sqrt(np.sum(np.square(terms))))

    g = blowdown_estimate(**base, sigmas=s, n_samples=40_000, seed=7)
    # Standard error of a sample sigma is 1/sqrt(2n) = 0.35 % at n = 40 000.
    assert g.sigma_kg == pytest.approx(first_order, rel=0.02)
    assert g.mc_mean_kg == pytest.approx(g.propellant_kg, abs=3 * g.sigma_kg / np.sqrt(40_000))


def test_error_grows_as_tank_empties():
    # First-order PVT error, computed (docs/sources.md §4): dm/m ~ (V_u/V_p) * dP/P. Only the reading's pressure is
    # uncertain here, ideal gas, no vapour pressure.
    s = replace(GaugeSigmas.zero(), pressure_pa=10e3)
    for reading in (1.8e6, 1.2e6, 0.8e6):
        g = blowdown_estimate(0.700, field_rho(293.15) * 0.6, 293.15, 2.4e6, reading, 293.15,
                              field_rho, no_vapour, ideal_gas, sigmas=s, n_samples=40_000)
        expected = g.ullage_m3 / g.liquid_volume_m3 * 10e3 / reading
        assert g.relative_sigma == pytest.approx(expected, rel=0.03)


def test_reproducible_by_seed():
    args = (0.0800, 60.0, 293.15, 2.2e6, 1.0e6, 303.15, HYDRAZINE_RHO, HYDRAZINE_PVAP, HELIUM)
    a = blowdown_estimate(*args, seed=42, n_samples=5000)
    b = blowdown_estimate(*args, seed=42, n_samples=5000)
    c = blowdown_estimate(*args, seed=43, n_samples=5000)
    assert a == b
    assert c.sigma_kg != a.sigma_kg
    assert c.sigma_kg == pytest.approx(a.sigma_kg, rel=0.06)  # 1/sqrt(2*5000) = 1 % per run
    assert a.propellant_kg == c.propellant_kg  # the nominal never depends on the seed


def test_zero_sigmas_give_zero_spread_and_result_is_frozen():
    g = blowdown_estimate(0.0800, 60.0, 293.15, 2.2e6, 1.0e6, 303.15, HYDRAZINE_RHO,
                          HYDRAZINE_PVAP, HELIUM, sigmas=GaugeSigmas.zero(), n_samples=10)
    assert g.sigma_kg == pytest.approx(0.0, abs=1e-9)
    assert g.mc_mean_kg == pytest.approx(g.propellant_kg, rel=1e-12)
    with pytest.raises(FrozenInstanceError):
        g.propellant_kg = 1.0


def test_gas_stored_xenon_mass_and_sigma():
    # A 100 L xenon tank at 15 MPa and 20 degC: m = rho V (about 204.6 kg, measured with CoolProp 8.0.0,
    # docs/sources.md §6). The density itself is checked against the virial form in tests/test_realgas.py;
    # here the estimate's mass must be rho V and its sigma the first-order propagation (checked below).
    xe = partial(realgas.gas_density, "xenon")
    g = gas_stored_estimate(0.100, 15e6, 293.15, xe, GaugeSigmas.from_transducer(20e6))
    assert g.propellant_kg == pytest.approx(0.100 * xe(15e6, 293.15), rel=1e-12)
    # First order: m = rho*V; terms from V, P (100 kPa = 0.5 % of 20 MPa), T, EOS.
    drho_dp = (xe(15.1e6, 293.15) - xe(14.9e6, 293.15)) / 0.2e6
    drho_dt = (xe(15e6, 293.65) - xe(15e6, 292.65)) / 1.0
    first_order = 0.100 * np.sqrt((g.gas_density_kg_m3 * 0.001) ** 2 + (drho_dp * 100e3) ** 2
                                  + (drho_dt * 0.5) ** 2 + (g.gas_density_kg_m3 * 0.002) ** 2)
    assert g.sigma_kg == pytest.approx(first_order, rel=0.03)


def test_invalid_physics_one_line_errors():
    kw = dict(liquid_density=field_rho, vapour_pressure=no_vapour, gas_density=ideal_gas)
    cases = [
        ((0.700, 750.0, 293.15, 2.4e6, 1.2e6, 303.15), "no initial ullage"),
        ((0.700, 605.1, 293.15, 2.4e6, 0.3e6, 303.15), "not below the tank volume"),
        ((0.700, 605.1, 293.15, 2.4e6, -1.0, 303.15), "tank pressure must be"),
        ((0.0, 605.1, 293.15, 2.4e6, 1.2e6, 303.15), "tank volume must be"),
    ]
    for args, text in cases:
        with pytest.raises(ValueError, match=text) as err:
            blowdown_estimate(*args, **kw)
        assert "\n" not in str(err.value)
    with pytest.raises(ValueError, match="not above the propellant vapour pressure"):
        blowdown_estimate(0.700, 605.1, 293.15, 2.4e6, 1.2e6, 303.15, field_rho,
                          lambda t: 1.3e6 + 0.0 * np.asarray(t), ideal_gas)
    with pytest.raises(ValueError, match="n_samples"):
        blowdown_estimate(0.700, 605.1, 293.15, 2.4e6, 1.2e6, 303.15, **kw, n_samples=1)
    with pytest.raises(ValueError, match="sigma pressure_pa"):
        GaugeSigmas(pressure_pa=-1.0)


def test_reading_within_noise_of_vapour_pressure_is_refused():
    # Gas pressure 400 kPa above a 1.2 MPa vapour pressure, read by a 150 kPa-sigma sensor:
    # 0.4 % of the draws (beyond -2.67 sigma) have no gas pressure left, so no sigma is quoted.
    wet = lambda t: 1.2e6 + 0.0 * np.asarray(t)  # noqa: E731
    noisy = replace(GaugeSigmas(), pressure_pa=150e3)
    nominal = blowdown_estimate(0.700, 605.1, 293.15, 2.4e6, 1.6e6, 303.15, field_rho, wet,
                                ideal_gas, sigmas=GaugeSigmas.zero(), n_samples=2)
    assert nominal.ullage_m3 < 0.700  # the noise-free reading itself is valid
    with pytest.raises(ValueError, match="Monte Carlo draws"):
        blowdown_estimate(0.700, 605.1, 293.15, 2.4e6, 1.6e6, 303.15, field_rho, wet,
                          ideal_gas, sigmas=noisy)


def test_temperature_limits_keep_noise_inside_the_correlation():
    args = (0.0800, 60.0, 293.15, 2.2e6, 1.0e6, 323.0, HYDRAZINE_RHO, HYDRAZINE_PVAP, HELIUM)
    with pytest.raises(ValueError, match="valid"):
        blowdown_estimate(*args, n_samples=2000)
    g = blowdown_estimate(*args, n_samples=2000,
                          temperature_limits_k=liquids.valid_range_k("hydrazine"))
    assert g.sigma_kg > 0.0


def test_reconcile_within_and_beyond_three_sigma():
    # Gauge 100 +- 2 kg, book 106 +- 1.5 kg: difference -6 kg, combined sigma
    # sqrt(4 + 2.25) = 2.5 kg -> -2.4 sigma, not flagged. Inverse variance: weights 1/4 and
    # 1/2.25 -> (100/4 + 106/2.25) / (1/4 + 1/2.25) = 103.84 kg, sigma 1/sqrt(0.69444) = 1.2 kg.
    r = reconcile(100.0, 2.0, 106.0, 1.5)
    assert r.difference_kg == -6.0
    assert r.combined_sigma_kg == pytest.approx(2.5)
    assert r.difference_sigmas == pytest.approx(-2.4)
    assert not r.beyond_limit
    assert r.rebaseline_kg == pytest.approx(103.84, abs=0.005)
    assert r.rebaseline_sigma_kg == pytest.approx(1.2, abs=1e-9)
    # 100 +- 1 against 105 +- 1: 5/sqrt(2) = 3.54 sigma -> flagged.
    flagged = reconcile(100.0, 1.0, 105.0, 1.0)
    assert flagged.beyond_limit and flagged.difference_sigmas == pytest.approx(-3.5355, abs=1e-4)
    assert inverse_variance([100.0, 105.0], [1.0, 1.0]) == pytest.approx((102.5, 0.70711), abs=1e-5)
    with pytest.raises(ValueError, match="book sigma"):
        reconcile(100.0, 1.0, 105.0, 0.0)


def test_core_gauging_does_not_import_coolprop():
    heavy = ("CoolProp", "pint", "textual", "rich", "tinydb")
    code = ("import sys, ledger.core.gauging, ledger.core.liquids, ledger.core.reconcile;"
            f"sys.exit(1 if any(m in sys.modules for m in {heavy!r}) else 0)")
    assert subprocess.run([sys.executable, "-c", code], check=False,
                          cwd=Path(__file__).resolve().parents[2]).returncode == 0
