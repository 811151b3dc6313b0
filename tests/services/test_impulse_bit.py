"""Pulse trains of an engine with an impulse-bit table: the propellant is N x I_bit(T) / (Isp_pulse g0).

Outside sources: the impulse bit is the thrust integrated over one pulse, I_bit = integral of F dt, and a
pulse train's propellant is its total impulse over the effective exhaust velocity, m = I / (Isp g0) (Sutton
& Biblarz, Rocket Propulsion Elements, 9th ed., ch. 2-3, total impulse and specific impulse [memory];
common practice for pulse-mode bookkeeping). The delta-v is the rocket equation, dv = Isp g0 ln(m0/m1)
(same book, ch. 4 [memory]), which for a small train is the impulse over the mass, dv ~ I/m (impulse-
momentum theorem). g0 = 9.80665 m/s^2 from scipy.constants (scipy's CODATA constants). The tables are
invented test data."""
from __future__ import annotations

import copy
import math

import pytest
import yaml
from scipy import constants

from ledger.core.codec import craft_from_dict, craft_to_dict
from ledger.errors import InputError
from ledger.services.craftfile import craft_from_document
from ledger.services.ledger import Ledger, create
from ledger.services.pulses import totals

T0 = 1.78e9
DOC = yaml.safe_load("""
craft: {name: Impulse-bit test craft (invented), dry_mass: 90 kg}
tanks:
  - {id: hyd, fluid: hydrazine, load: 6 kg, residual: 0.1 kg}
engines:
  - id: acs
    isp: 220 s
    thrust: 1 N
    feeds: {hyd: 1}
    pulse:
      isp_factor: 0.8
      impulse_bit: {on_time: [10 ms, 50 ms, 100 ms], impulse: [6 mN s, 42 mN s, 92 mN s]}
    life: {pulses: 10000}
""")


def _ledger(tmp_path, doc=DOC) -> Ledger:
    path = str(tmp_path / "ib.json")
    create(path, craft_from_document(copy.deepcopy(doc), "ib.yaml"), by="t")
    return Ledger(path)


def test_a_pulse_train_draws_its_impulse_over_the_pulse_isp(tmp_path):
    led = _ledger(tmp_path)
    led.record("use", {"engine": "acs", "pulses": 1000, "on_time": 0.030}, at=T0)
    snap = led.snapshot()
    # By hand: I_bit(30 ms) interpolated between (10 ms, 6 mN s) and (50 ms, 42 mN s):
    # 6 + (42 - 6) x (30 - 10) / (50 - 10) = 24 mN s; 1000 pulses give 24 N s of impulse;
    # Isp_pulse = 0.8 x 220 s = 176 s; propellant = 24 / (176 x 9.80665) = 0.013905 kg.
    hand = 1000 * 0.024 / (0.8 * 220.0 * constants.g)
    assert snap.replay.propellant[-1] == pytest.approx(hand, rel=1e-12)
    assert snap.state.remaining_kg[0] == pytest.approx(6.0 - hand, rel=1e-12)
    # the per-thruster totals keep the commanded on-time (1000 x 30 ms), not the equivalent steady one
    row = totals(snap.craft, snap.resolved.events, snap.replay)[0]
    assert (row["pulses"], row["on_time_s"]) == (1000, pytest.approx(30.0))
    assert row["throughput_kg"] == pytest.approx(hand, rel=1e-12)
    assert not any("impulse-bit" in w for w in snap.warnings)


def test_a_pulse_burn_delivers_the_impulse_over_the_mass(tmp_path):
    led = _ledger(tmp_path)
    led.record("burn", {"engine": "acs", "pulses": 2000, "on_time": 0.050}, at=T0)
    snap = led.snapshot()
    impulse = 2000 * 0.042  # N s: the table's point at 50 ms, exactly
    mp = impulse / (0.8 * 220.0 * constants.g)
    m0 = 96.0
    assert snap.replay.propellant[-1] == pytest.approx(mp, rel=1e-12)
    assert snap.replay.dv[-1] == pytest.approx(0.8 * 220.0 * constants.g * math.log(m0 / (m0 - mp)), rel=1e-12)
    # impulse-momentum: dv ~ I / m for a small train (the mean mass, second order in mp / m0)
    assert snap.replay.dv[-1] == pytest.approx(impulse / (m0 - mp / 2), rel=1e-6)


def test_a_pulse_burn_executing_a_plan_is_judged_on_its_impulse(tmp_path):
    led = _ledger(tmp_path)
    mp = 2000 * 0.042 / (0.8 * 220.0 * constants.g)
    delivered = 0.8 * 220.0 * constants.g * math.log(96.0 / (96.0 - mp))  # by hand, m0 = 96 kg
    led.record("plan", {"engine": "acs", "dv": delivered}, at=T0)
    stored, _ = led.record("burn", {"engine": "acs", "pulses": 2000, "on_time": 0.050, "plan": 1}, at=T0 + 10)
    assert not any("achieved dv" in w for w in stored["data"].get("plan_warnings") or [])
    led.record("plan", {"engine": "acs", "dv": delivered}, at=T0 + 20)
    stored, _ = led.record("burn", {"engine": "acs", "pulses": 4000, "on_time": 0.050, "plan": 3}, at=T0 + 30)
    assert any("achieved dv" in w for w in stored["data"]["plan_warnings"])  # twice the impulse: off the plan


def test_without_an_isp_factor_the_steady_state_isp_is_used(tmp_path):
    doc = copy.deepcopy(DOC)
    del doc["engines"][0]["pulse"]["isp_factor"]
    led = _ledger(tmp_path, doc)
    led.record("use", {"engine": "acs", "pulses": 500, "on_time": 0.100}, at=T0)
    hand = 500 * 0.092 / (220.0 * constants.g)  # 46 N s over 220 s x g0
    assert led.snapshot().replay.propellant[-1] == pytest.approx(hand, rel=1e-12)


def test_an_on_time_outside_the_table_takes_the_end_value_and_warns(tmp_path):
    led = _ledger(tmp_path)
    _, warned = led.record("use", {"engine": "acs", "pulses": 100, "on_time": 0.005}, at=T0)
    snap = led.snapshot()
    assert snap.replay.propellant[-1] == pytest.approx(100 * 0.006 / (0.8 * 220.0 * constants.g), rel=1e-12)
    expected = ("entry #1 (engine acs): on-time 5.000 ms per pulse outside its impulse-bit table "
                "(10.000 to 100.000 ms); end value used")
    assert expected in snap.warnings and expected in warned


def test_the_monte_carlo_segments_and_the_reference_loop_draw_the_same(tmp_path):
    """The sampled paths read the same equivalent on-time: their mean draw is the nominal one."""
    from ledger.core.montecarlo import simulate  # noqa: PLC0415
    from ledger.core.montecarlo_loop import simulate_loop  # noqa: PLC0415
    from ledger.core.segments import segments  # noqa: PLC0415

    led = _ledger(tmp_path)
    led.record("use", {"engine": "acs", "pulses": 1000, "on_time": 0.030}, at=T0)
    snap = led.snapshot()
    seg = segments(snap.craft, snap.resolved.events)
    assert float(seg.duration.sum()) * snap.craft.engines[0].mass_flow == pytest.approx(snap.replay.propellant[-1])
    for run in (simulate, simulate_loop):  # loads drawn too: 6 g sigma over 400 samples, 0.3 g on the mean
        samples = run(snap.craft, snap.resolved.events, 400, seed=3)
        drawn = 6.0 - samples.remaining_kg[:, 0]
        assert float(drawn.mean()) == pytest.approx(float(snap.replay.propellant[-1]), abs=1.5e-3)


def test_the_table_survives_the_store(tmp_path):
    craft = craft_from_document(copy.deepcopy(DOC), "ib.yaml")
    assert craft_from_dict(craft_to_dict(craft)) == craft
    assert _ledger(tmp_path).snapshot().craft == craft


BLOWDOWN = {
    "craft": {"name": "B", "dry_mass": "100 kg"},
    "tanks": [{"id": "hyd", "fluid": "hydrazine", "load": "20 kg", "residual": "0.5 kg", "volume": "30 L",
               "pressurant": {"gas": "helium", "pressure": "22 bar", "temperature": "20 degC"}}],
    "engines": [{"id": "mono", "feeds": {"hyd": 1},
                 "performance": {"pressure": ["10 bar", "15 bar", "22 bar"], "thrust": ["0.48 N", "0.71 N", "1.02 N"],
                                 "isp": ["218.3 s", "226.4 s", "231.5 s"]},
                 "pulse": {"isp_factor": 0.75, "impulse_bit": {"on_time": ["20 ms", "100 ms"],
                                                               "impulse": ["15 mN s", "95 mN s"],
                                                               "pressure": "22 bar"}}}],
}


def test_under_a_performance_table_the_impulse_bit_follows_thrust_over_its_reference(tmp_path):
    pytest.importorskip("CoolProp")
    led = _ledger(tmp_path, BLOWDOWN)
    led.record("use", {"engine": "mono", "duration": 9000.0}, at=T0)  # blow the tank down first
    led.record("use", {"engine": "mono", "pulses": 200, "on_time": 0.060}, at=T0 + 60)
    snap = led.snapshot()
    flown = snap.blowdown.flown
    p = float(flown.pressure_start[-1])
    assert 10e5 < p < 20e5 and float(flown.pressure_end[-1]) == pytest.approx(p, rel=1e-3)  # a small train
    # By hand at that feed pressure: I_bit(60 ms) = 15 + (95 - 15) x 40 / 80 = 55 mN s at 22 bar (1.02 N);
    # at p it scales by F(p) / 1.02 N; Isp_pulse = 0.75 x Isp(p); F and Isp interpolated linearly by hand.
    def interp(x, xs, ys):
        for (x0, y0), (x1, y1) in zip(zip(xs, ys), zip(xs[1:], ys[1:])):
            if x0 <= x <= x1:
                return y0 + (y1 - y0) * (x - x0) / (x1 - x0)
        raise AssertionError(x)
    thrust = interp(p, [10e5, 15e5, 22e5], [0.48, 0.71, 1.02])
    isp = interp(p, [10e5, 15e5, 22e5], [218.3, 226.4, 231.5])
    hand = 200 * 0.055 * thrust / 1.02 / (0.75 * isp * constants.g)
    assert snap.replay.propellant[-1] == pytest.approx(hand, rel=1e-3)


def test_under_a_performance_table_the_monte_carlo_mean_is_the_nominal_draw(tmp_path):
    """The sampler runs on the blowdown replay's equivalent ledger (services.blowdown): a pulse train's
    equivalent on-time must carry over, so the samples' mean remaining is the nominal one (within 4 SE)."""
    pytest.importorskip("CoolProp")
    from ledger.core.montecarlo import simulate  # noqa: PLC0415

    led = _ledger(tmp_path, BLOWDOWN)
    led.record("use", {"engine": "mono", "duration": 9000.0}, at=T0)
    led.record("use", {"engine": "mono", "pulses": 20000, "on_time": 0.060}, at=T0 + 60)
    led.record("use", {"engine": "mono", "duration": 2000.0}, at=T0 + 120)
    snap = led.snapshot()
    s = simulate(snap.flight_craft, snap.flight_events, 2000, seed=1)
    mean, se = float(s.remaining_kg[:, 0].mean()), float(s.remaining_kg[:, 0].std()) / math.sqrt(2000)
    assert abs(mean - float(snap.state.remaining_kg[0])) < 4 * se


def test_under_a_performance_table_the_execution_check_counts_the_pulse_isp(tmp_path):
    """The delta-v a plan is judged against is the one the replay books, at the pulse-mode Isp (before, the
    blowdown replay and this check both counted a table engine's pulse burn at the steady-state Isp)."""
    pytest.importorskip("CoolProp")
    from ledger.services.execution import achieved_dv  # noqa: PLC0415

    led = _ledger(tmp_path, BLOWDOWN)
    led.record("use", {"engine": "mono", "duration": 9000.0}, at=T0)
    before = led.snapshot()
    payload = {"engine": "mono", "pulses": 2000, "on_time": 0.060, "duration": 120.0}
    judged = achieved_dv(before, payload)
    led.record("burn", {"engine": "mono", "pulses": 2000, "on_time": 0.060}, at=T0 + 60)
    assert judged == pytest.approx(float(led.snapshot().replay.dv[-1]), rel=1e-6)
    after = led.snapshot()
    p = float(after.blowdown.flown.pressure_start[-1])
    isp = 218.3 + (226.4 - 218.3) * (p - 10e5) / 5e5 if p < 15e5 else 226.4 + (231.5 - 226.4) * (p - 15e5) / 7e5
    m0, m1 = float(after.replay.mass_before[-1]), float(after.replay.mass_after[-1])
    # by hand: the rocket equation at Isp_pulse = 0.75 x Isp(p), p nearly constant over a small train
    assert float(after.replay.dv[-1]) == pytest.approx(0.75 * isp * constants.g * math.log(m0 / m1), rel=1e-3)


@pytest.mark.parametrize("change, words", [
    (lambda ib: ib.update(impulse=["6 mN s", "42 mN s"]), "3 on-times but 2 impulses"),
    (lambda ib: ib.update(on_time=["50 ms", "10 ms", "100 ms"]), "impulse_bit.on_time: expected strictly increasing"),
    (lambda ib: ib.update(on_time=["10 ms"], impulse=["6 mN s"]), "impulse_bit.on_time: expected a list of 2 to"),
    (lambda ib: ib.update(impulse=["6 mN s", "42 N", "92 mN s"]), "impulse_bit.impulse[1]: '42 N' is not a impulse"),
    (lambda ib: ib.update(impulse=["6 mN s", "0 mN s", "92 mN s"]), "impulse_bit.impulse[1]"),
    (lambda ib: ib.update(pressure="22 bar"), "impulse_bit.pressure: this engine has no performance table"),
    (lambda ib: ib.pop("impulse"), "impulse_bit.impulse: expected a list"),
])
def test_an_inconsistent_table_is_one_line(change, words):
    doc = copy.deepcopy(DOC)
    change(doc["engines"][0]["pulse"]["impulse_bit"])
    with pytest.raises(InputError) as err:
        craft_from_document(doc, "ib.yaml")
    assert words in str(err.value) and "\n" not in str(err.value)


def test_a_table_engine_must_say_where_its_impulse_bits_were_measured():
    doc = copy.deepcopy(BLOWDOWN)
    del doc["engines"][0]["pulse"]["impulse_bit"]["pressure"]
    with pytest.raises(InputError, match="impulse_bit.pressure: missing"):
        craft_from_document(doc, "b.yaml")
