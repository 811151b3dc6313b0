"""One bookkeeping sigma (issue 11.14): the gauge check's sigma is the Monte Carlo's for that tank.

Invented craft. The reference is a plain sample standard deviation of the sampler's remaining mass, with
its own sampling error: the sd of a sample sd is sigma / sqrt(2(n-1)) for normal data (common practice).
"""
from __future__ import annotations

import math

import pytest

from ledger.core.craft import Craft, Engine, Tank
from ledger.services import gauging, uncertainty
from ledger.services.ledger import Ledger, create
from tests.helpers import T0

CRAFT = Craft("Test mono", 400.0, (Tank("hz", "hydrazine", 120.0, 1.0),),
              (Engine("thr", 220.0, 22.0, {"hz": 1.0}),))


@pytest.mark.parametrize("burns", [[("dv", 20.0)], [("dv", 5.0)] * 8, [("propellant", 30.0), ("duration", 600.0)]])
def test_gauge_bookkeeping_sigma_is_the_samplers(tmp_path, burns):
    path = str(tmp_path / "m.json")
    create(path, CRAFT, by="test")
    led = Ledger(path)
    for i, (field, amount) in enumerate(burns):
        led.record("burn", {"engine": "thr", field: amount}, at=T0 + 3600 * i, by="test")
    snap = led.snapshot()
    _, sigma, _ = gauging.bookkeeping_at(snap, "hz", T0 + 1e6)
    n = 20_000
    s = uncertainty.run(snap, samples=n, seed=7)
    ref = float(s.remaining_kg[:, 0].std(ddof=1))
    # Before the fix a separate 2 % flow rule gave ~1.8x the sampler's figure.
    assert sigma == pytest.approx(ref, rel=max(0.05, 6 / math.sqrt(2 * (n - 1))))
