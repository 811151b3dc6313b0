"""Pulse-mode firings (issue 12, point 3): a pulse train of N pulses of on-time T draws N x T x mass flow,
with mass flow = F/(Isp g0), and delivers the delta-v of the rocket equation at the pulse-mode Isp.

Outside checks, by hand in each test:
- mdot = F/(Isp g0): Sutton & Biblarz, Rocket Propulsion Elements, 9th ed., eq. 2-5 (specific impulse
  Is = F/(mdot g0)) [memory for the equation number]; g0 from scipy.constants (scipy's CODATA/CGPM value).
- dv = Isp g0 ln(m0/mf): the ideal rocket equation, Sutton & Biblarz, 9th ed., ch. 4 [memory].
"""
from __future__ import annotations

import math

import numpy as np
import pytest
import scipy
from scipy import constants

from ledger.core.craft import Craft, Engine, Tank
from ledger.core.entries import Entry, apply_correction
from ledger.core.montecarlo_loop import simulate_loop
from ledger.core.replay import replay, replay_loop
from ledger.core.segments import segments
from ledger.core.sigmas import ENTRY_DEFAULTS, entry_sigma
from ledger.services.pulses import pulse_train

G0 = constants.g  # scipy.constants.g: standard acceleration of gravity, 9.80665 m/s^2 (SOURCE names the version)
SOURCE = f"scipy {scipy.__version__}"


def craft(factor: float = 0.75) -> Craft:
    # Invented test craft: 100 kg dry, 10 kg hydrazine, a 2 N thruster pair at 220 s fired in pulses.
    return Craft("pulse-test", 100.0, (Tank("hyd", "hydrazine", 10.0),),
                 (Engine("rcs", 220.0, 2.0, {"hyd": 1.0}, pulse_isp_factor=factor),
                  Engine("main", 230.0, 20.0, {"hyd": 1.0})))


def ev(seq, kind, **data):
    return Entry(seq, kind, 1.0e9 + seq, 1.0e9 + seq, "t", "", data)


def test_propellant_of_a_pulse_train_is_count_times_on_time_times_mass_flow():
    # Hand computation (Sutton & Biblarz eq. 2-5, g0 from scipy): 1200 pulses of 50 ms at F = 2 N, Isp = 220 s
    mdot = 2.0 / (220.0 * G0)                      # kg/s
    expected = 1200 * 0.050 * mdot                 # 60 s of on-time
    assert expected == pytest.approx(0.0556209, rel=1e-5)  # by hand: 220 x 9.80665 = 2157.463; 120 / 2157.463
    data = pulse_train(1200, 0.050)                # the stored payload (services.records uses it)
    rep = replay(craft(), [ev(1, "use", engine="rcs", **data)])
    assert rep.propellant[0] == pytest.approx(expected, rel=1e-12), f"g0 from {SOURCE}"
    assert rep.dv[0] == 0.0  # a use delivers no delta-v
    m, rem = replay_loop(craft(), [ev(1, "use", engine="rcs", **data)])
    assert rem[0] == pytest.approx(10.0 - expected, rel=1e-12)


def test_delta_v_of_a_pulse_burn_uses_the_reduced_isp():
    # Rocket equation by hand at Isp_pulse = 0.75 x 220 s (Sutton & Biblarz ch. 4), m0 = 110 kg
    data = pulse_train(900, 0.100)
    mp = 900 * 0.100 * 2.0 / (220.0 * G0)
    expected_dv = 0.75 * 220.0 * G0 * math.log(110.0 / (110.0 - mp))
    rep = replay(craft(), [ev(1, "burn", engine="rcs", **data)])
    assert rep.propellant[0] == pytest.approx(mp, rel=1e-12)
    assert rep.dv[0] == pytest.approx(expected_dv, rel=1e-12), f"g0 from {SOURCE}"
    steady = replay(craft(factor=1.0), [ev(1, "burn", engine="rcs", **data)])
    assert rep.dv[0] == pytest.approx(0.75 * steady.dv[0], rel=1e-12)  # same propellant, 75 % of the impulse
    # a steady burn by duration on the same ledger keeps the full Isp
    mixed = replay(craft(), [ev(1, "burn", engine="rcs", **data), ev(2, "burn", engine="rcs", duration=90.0)])
    m1 = 110.0 - mp
    assert mixed.dv[1] == pytest.approx(220.0 * G0 * math.log(m1 / (m1 - mp)), rel=1e-12)


def test_scan_and_plain_loop_agree_on_a_ledger_of_pulse_trains():
    c = craft()
    events = [ev(1, "burn", engine="main", dv=3.0)]
    events += [ev(2 + k, "use", engine="rcs", **pulse_train(40 + k, 0.02 + 0.001 * k)) for k in range(50)]
    events += [ev(60, "burn", engine="rcs", **pulse_train(300, 0.1)), ev(61, "burn", engine="main", dv=1.0)]
    rep = replay(c, events)
    m, rem = replay_loop(c, events)
    assert rep.mass_kg == pytest.approx(m, rel=1e-12)
    assert rep.remaining_kg == pytest.approx(rem, rel=1e-12)


def test_pulse_sigma_default_is_its_own_and_reaches_the_samplers():
    data = pulse_train(1000, 0.05)
    assert entry_sigma(data, "duration") == pytest.approx(ENTRY_DEFAULTS["pulses"].relative * 50.0)
    assert ENTRY_DEFAULTS["pulses"].relative > ENTRY_DEFAULTS["duration"].relative  # worse in pulse mode
    events = [ev(1, "use", engine="rcs", **data)]
    seg = segments(craft(), events)
    assert seg.duration_var[0, 0] == pytest.approx((0.03 * 50.0) ** 2)
    assert np.isfinite(simulate_loop(craft(), events, 20).mass_kg).all()


def test_a_correction_to_another_amount_drops_the_pulse_fields():
    e = ev(1, "use", engine="rcs", **pulse_train(100, 0.05))
    fixed = apply_correction(e, {"propellant": 0.01})
    assert "pulses" not in fixed.data and "on_time" not in fixed.data and "duration" not in fixed.data


def test_codec_keeps_pulse_factor_and_life_and_omits_them_when_absent():
    from ledger.core.codec import craft_from_dict, craft_to_dict

    c = Craft("c", 10.0, (Tank("t", "hydrazine", 1.0),),
              (Engine("a", 220.0, 1.0, {"t": 1.0}, pulse_isp_factor=0.7, life={"pulses": 5e4, "throughput_kg": 3.0}),
               Engine("b", 220.0, 1.0, {"t": 1.0})))
    d = craft_to_dict(c)
    assert "pulse_isp_factor" not in d["engines"][1] and "life" not in d["engines"][1]  # older ledgers unchanged
    assert craft_from_dict(d) == c
