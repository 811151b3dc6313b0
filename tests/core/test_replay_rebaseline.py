"""Replay across re-baselines and the bookkeeping sigma, both worked by hand (invented numbers)."""
import math

import numpy as np
import pytest

from ledger.core.booksigma import DEFAULT_FLOW_ERROR_REL, DEFAULT_LOAD_SIGMA_REL, bookkeeping_sigma
from ledger.core.craft import G0, Craft, Engine, Tank
from ledger.core.entries import resolve
from ledger.core.replay import replay, replay_loop, steps_from_events
from tests.helpers import T0, ev

# Dry 100 kg; tank a 50 kg (load sigma 0.05 kg given), tank b 30 kg (no sigma: 0.1 % default = 0.03 kg).
# Engine e draws half from each tank, Isp 200 s +- 6 s (3 % flow-model error); engine f draws from a only,
# Isp 250 s with no sigma (1 % default, core.sigmas: the Monte Carlo's). Amount sigmas: 1 % default.
CRAFT = Craft("hand", 100.0, (Tank("a", "hydrazine", 50.0, load_sigma_kg=0.05), Tank("b", "hydrazine", 30.0)),
              (Engine("e", 200.0, 10.0, {"a": 1.0, "b": 1.0}, isp_sigma_s=6.0), Engine("f", 250.0, 5.0, {"a": 1.0})))
VE_F = 250.0 * G0


def history():
    # Worked by hand:
    #   start                      m = 180,  a = 50, b = 30
    #   1 burn e 10 kg             m = 170,  a = 45, b = 25
    #   2 rebaseline a = 41        m = 166 (41 - 45 = -4 kg), a = 41
    #   3 burn f dv = ve_f ln(166/156): the mass ratio uses the re-baselined 166 kg -> m = 156, a = 31
    #     (ignoring the re-baseline would give 170*156/166 = 159.759 kg after it)
    #   4 mass -6 kg               m = 150
    #   5 rebaseline b = 27        m = 152 (27 - 25 = +2 kg), b = 27
    #   6 use e 2 kg               m = 150,  a = 30, b = 26
    return [ev(1, "burn", T0 + 1, engine="e", propellant=10.0),
            ev(2, "rebaseline", T0 + 2, tank="a", remaining_kg=41.0, sigma_kg=0.4, gauge=0),
            ev(3, "burn", T0 + 3, engine="f", dv=VE_F * math.log(166.0 / 156.0)),
            ev(4, "mass", T0 + 4, delta=-6.0),
            ev(5, "rebaseline", T0 + 5, tank="b", remaining_kg=27.0, sigma_kg=0.3, gauge=0),
            ev(6, "use", T0 + 6, engine="e", propellant=2.0)]


def test_replay_honours_rebaselines_worked_by_hand():
    events = resolve(history()).events
    rep = replay(CRAFT, events)
    assert rep.mass_after == pytest.approx([170.0, 166.0, 156.0, 150.0, 152.0, 150.0], abs=1e-9)
    assert rep.remaining == pytest.approx(np.array([[45, 25], [41, 25], [31, 25], [31, 25], [31, 27], [30, 26]],
                                                   dtype=float), abs=1e-9)
    assert rep.adjusted[1] == pytest.approx([-4.0, 0.0]) and rep.adjusted[4] == pytest.approx([0.0, 2.0])
    assert rep.propellant[[1, 4]] == pytest.approx([0.0, 0.0]) and rep.dv[[1, 4]] == pytest.approx([0.0, 0.0])
    assert rep.dv[2] == pytest.approx(VE_F * math.log(166.0 / 156.0))
    assert rep.drawn[2] == pytest.approx([10.0, 0.0], abs=1e-9)
    m, remaining = replay_loop(CRAFT, events)
    assert m == pytest.approx(150.0, abs=1e-9) and remaining == pytest.approx([30.0, 26.0], abs=1e-9)
    assert rep.mass_kg == pytest.approx(m, abs=1e-12) and rep.remaining_kg == pytest.approx(remaining, abs=1e-12)


def test_rebaseline_at_an_earlier_time_lands_where_it_belongs():
    # The same re-baseline logged last but dated between the burns replays at its `at`.
    entries = history()
    moved = [e for e in entries if e.seq != 2] + [ev(7, "rebaseline", T0 + 2, tank="a", remaining_kg=41.0,
                                                     sigma_kg=0.4, gauge=0)]
    a = replay(CRAFT, resolve(entries).events)
    b = replay(CRAFT, resolve(moved).events)
    assert b.mass_kg == pytest.approx(a.mass_kg) and b.remaining_kg == pytest.approx(a.remaining_kg)


def test_bookkeeping_sigma_worked_by_hand():
    events = resolve(history()).events
    steps = steps_from_events(CRAFT, events)
    rep = replay(CRAFT, events, steps)
    # Precondition of the hand computation below: the sampler's documented defaults (0.1 % load by weighing,
    # 1 % Isp, core.sigmas; docs/sources.md §4, from memory), not a reference check.
    assert DEFAULT_LOAD_SIGMA_REL == 0.001 and DEFAULT_FLOW_ERROR_REL == 0.01
    # Nothing burnt: the load sigmas, 0.05 kg and 0.1 % of 30 kg.
    assert bookkeeping_sigma(CRAFT, events, steps, rep, upto=0) == pytest.approx([0.05, 0.03])
    # After burn 1 (quoted in propellant: no Isp bias; its own 1 % of the 5 kg drawn from each tank, 0.05):
    # a sqrt(0.05^2 + 0.05^2) = 0.070711, b sqrt(0.03^2 + 0.05^2) = 0.058310.
    assert bookkeeping_sigma(CRAFT, events, steps, rep, upto=1) == pytest.approx([0.070711, 0.058310], abs=1e-6)
    # Everything: a restarts at its re-baseline (0.4 kg), then f's dv burn drew 10 kg (Isp bias 1 %: 0.1, own
    # 1 %: 0.1) and e's use 1 kg (own 1 %: 0.01): sqrt(0.16 + 0.01 + 0.01 + 0.0001) = 0.424382.
    # b restarts at 0.3 kg, then e drew 1 kg: sqrt(0.09 + 0.0001) = 0.300167.
    assert bookkeeping_sigma(CRAFT, events, steps, rep) == pytest.approx([0.424382, 0.300167], abs=1e-6)


def test_burns_quoted_in_propellant_carry_only_their_own_independent_errors():
    # Burns 1 and 6 only, both quoted in kg: no Isp bias (the sampler draws none for them), own 1 % each:
    # sqrt(0.05^2 + 0.05^2 + 0.01^2) = 0.071414. The engine bias adding linearly over dv burns is checked
    # against the Monte Carlo in tests/services/test_one_booksigma.py.
    events = resolve([e for e in history() if e.seq in (1, 6)]).events
    steps = steps_from_events(CRAFT, events)
    sigma = bookkeeping_sigma(CRAFT, events, steps, replay(CRAFT, events, steps))
    assert sigma[0] == pytest.approx(0.071414, abs=1e-6)
