"""Lifetime forecast maths (ledger.core.forecast) against hand computations."""
from __future__ import annotations

import math

import numpy as np
import pytest

from ledger.core import forecast as fc
from ledger.core.craft import Craft, Engine, Routine, Tank

# GEO north-south station keeping: dv = 2 v sin(di/2), v_GEO = 3074.66 m/s, di = 0.85 deg/yr
# -> 45.6 m/s/yr (drift rate from Soop, Handbook of Geostationary Orbits, from memory; the dv computed;
# docs/sources.md §7). Only an input rate here: the tests below check the forecast maths, not this figure.
NS_RATE = 45.6


def test_lifetime_is_dv_free_over_rate_in_julian_years():
    # Hand computation: 365.12 m/s free at 45.6 m/s/yr -> 365.12 / 45.6 = 8.007 yr;
    # 8.007 yr x 365.25 d (Julian year, IAU) = 2924.6 d after the start.
    start = 1_767_225_600.0  # 2026-01-01T00:00:00Z
    life = fc.lifetime("thr", 365.12, NS_RATE, start)
    assert life.years == pytest.approx(8.007, abs=5e-4)
    assert (life.runs_out - start) / 86400.0 == pytest.approx(2924.6, abs=0.1)


def test_no_rate_or_beyond_the_horizon_gives_no_date():
    assert math.isinf(fc.lifetime("x", 100.0, 0.0, 0.0).years)
    assert fc.lifetime("x", 100.0, 0.0, 0.0).runs_out is None
    # 100 m/s at 0.05 m/s/yr lasts 2000 years: beyond the 1000-year horizon, so no calendar date.
    life = fc.lifetime("x", 100.0, 0.05, 0.0)
    assert life.years == pytest.approx(2000.0) and life.runs_out is None


def test_negative_dv_free_counts_as_none_left():
    life = fc.lifetime("x", -3.0, NS_RATE, 10.0)
    assert life.years == 0.0 and life.runs_out == 10.0


def test_projection_is_a_straight_line_ending_at_zero():
    # 100 m/s at 45.6 m/s/yr: 2.193 yr; whole-year steps 0, 1, 2, then the run-out point.
    life = fc.lifetime("thr", 100.0, NS_RATE, 0.0)
    t, dv = fc.projection(life)
    years = t / fc.YEAR_S
    assert list(years[:3]) == [0.0, 1.0, 2.0]
    assert years[-1] == pytest.approx(100.0 / NS_RATE)
    assert dv[0] == 100.0 and dv[1] == pytest.approx(54.4) and dv[-1] == pytest.approx(0.0, abs=1e-9)


def test_projection_thins_long_lifetimes_to_a_few_figures():
    life = fc.lifetime("thr", 45.6 * 30, NS_RATE, 0.0)  # 30 years
    t, dv = fc.projection(life, max_figures=7)
    assert len(t) <= 7 and dv[-1] == pytest.approx(0.0, abs=1e-9)
    assert np.all(np.diff(dv) < 0)


def test_routine_lines_for_one_engine_add_up():
    # North-south 45.6 plus east-west about 2 m/s/yr (Soop, Handbook of Geostationary Orbits, from memory; docs/sources.md §7) on the same thrusters.
    craft = Craft("c", 1000.0, (Tank("t", "N2H4", 100.0),), (Engine("thr", 220.0, 1.0, {"t": 1.0}),),
                  routine=(Routine("thr", NS_RATE), Routine("thr", 2.0)))
    assert fc.routine_rates(craft) == {"thr": pytest.approx(47.6)}


def test_shared_tanks_are_named():
    tanks = (Tank("ox", "MON-3", 100.0), Tank("fuel", "MMH", 60.0), Tank("xe", "Xe", 50.0))
    engines = (Engine("a", 290.0, 10.0, {"ox": 1.65, "fuel": 1.0}),
               Engine("b", 318.0, 440.0, {"ox": 1.65, "fuel": 1.0}),
               Engine("hall", 1600.0, 0.09, {"xe": 1.0}))
    craft = Craft("c", 1000.0, tanks, engines)
    assert fc.shared_tanks(craft, ["a", "b", "hall"]) == [("a", "b", ("ox", "fuel"))]


def test_sample_indices_keep_both_ends():
    idx = fc.sample_indices(10_000, 400)
    assert idx[0] == 0 and idx[-1] == 9_999 and len(idx) <= 400
    assert list(fc.sample_indices(5, 400)) == [0, 1, 2, 3, 4]


def test_forecast_core_stays_pure():
    # Project rule (DEVELOPERS.md layout): the core imports no UI, storage, unit or plotting library.
    import subprocess
    import sys

    code = ("import sys, ledger.core.forecast; "
            "print(sorted(m for m in ('textual', 'rich', 'tinydb', 'pint', 'CoolProp', 'matplotlib') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
