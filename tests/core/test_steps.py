"""Step arrays built field by field: each kind of event becomes the step the replay rules give, worked by
hand below; an event naming an engine the craft does not have, or lacking its amount, is refused."""
import math

import numpy as np
import pytest

from ledger.core.craft import G0, Craft, Engine, Tank
from ledger.core.replay import STEP_DRAW, STEP_MASS, STEP_REBASE, STEP_SCALE, steps_from_events
from tests.helpers import ev

# Invented craft: engine e at 200 s and 10 N, so its mass flow is 10 / (200 * g0) kg/s (g0 = 9.80665 m/s^2,
# 3rd CGPM 1901).
CRAFT = Craft("steps", 100.0, (Tank("a", "hydrazine", 50.0),), (Engine("e", 200.0, 10.0, {"a": 1.0}),))
FLOW = 10.0 / (200.0 * G0)


def test_each_kind_becomes_its_step():
    events = [ev(1, "burn", engine="e", dv=2.5), ev(2, "burn", engine="e", duration=30.0),
              ev(3, "use", engine="e", propellant=0.4), ev(4, "use", engine="e", duration=12.0),
              ev(5, "mass", delta=-3.0), ev(6, "rebaseline", tank="a", remaining_kg=41.0, gauge=1)]
    s = steps_from_events(CRAFT, events)
    assert s.kind.tolist() == [STEP_SCALE, STEP_DRAW, STEP_DRAW, STEP_DRAW, STEP_MASS, STEP_REBASE]
    assert s.engine.tolist() == [0, 0, 0, 0, -1, -1]
    assert s.is_burn.tolist() == [True, True, False, False, False, False]
    assert s.tank.tolist() == [-1, -1, -1, -1, -1, 0]
    want = [2.5, 30.0 * FLOW, 0.4, 12.0 * FLOW, -3.0, 41.0]
    assert all(math.isclose(a, b, rel_tol=1e-15) for a, b in zip(s.amount.tolist(), want))


def test_no_events_no_steps():
    s = steps_from_events(CRAFT, [])
    assert s.kind.size == s.engine.size == s.amount.size == 0 and s.kind.dtype == np.int8


def test_an_unknown_engine_is_refused():
    with pytest.raises(KeyError, match="engine 'x' of entry 2"):
        steps_from_events(CRAFT, [ev(1, "use", engine="e", propellant=0.1), ev(2, "burn", engine="x", dv=1.0)])


def test_a_draw_without_its_amount_is_refused():
    with pytest.raises(KeyError, match="propellant"):
        steps_from_events(CRAFT, [ev(1, "use", engine="e")])
