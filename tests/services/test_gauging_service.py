"""The gauging service on an invented blowdown craft: the tank reading at loading is split into helium and
vapour pressure, the bookkeeping compared with is the one at the reading's time, and re-baselines adopt
the inverse-variance combination (only when a named person gives it)."""
import pytest

from ledger.core import liquids
from ledger.core.craft import Craft, Engine, Pressurant, Tank
from ledger.errors import InputError
from ledger.services import gauging, views
from ledger.services.ledger import Ledger, create
from tests.helpers import T0

# Loading record of the hand-worked case in tests/core/test_gauging.py: 0.0800 m3, 60.00 kg hydrazine at
# 20.0 degC, helium at 2.200 MPa gas pressure. The craft file gives what the tank gauge read, so the
# hydrazine vapour pressure at 20 degC is added here (the service must take it off again).
P_VAP_20C = liquids.vapour_pressure("hydrazine", 293.15)  # ~1.40 kPa (REFPROP 1404.7 Pa, per core.liquids)
CRAFT = Craft("Test blowdown", 150.0,
              (Tank("hz", "hydrazine", 60.0, 0.5, volume_m3=0.0800,
                    pressurant=Pressurant("helium", 2.2e6 + P_VAP_20C, 293.15), load_sigma_kg=0.06),),
              (Engine("thr", 220.0, 22.0, {"hz": 1.0}, isp_sigma_s=4.4),))


@pytest.fixture()
def led(tmp_path):
    path = str(tmp_path / "blowdown.json")
    create(path, CRAFT, by="test")
    ledger = Ledger(path)
    ledger.record("burn", {"engine": "thr", "propellant": 26.5}, at=T0, by="test")
    return ledger


def test_reading_reproduces_the_hand_worked_case_and_compares_at_its_time(led):
    snap = led.snapshot()
    # Read at 1.000 MPa and 30.0 degC: 33.503 kg (hand-worked in tests/core/test_gauging.py).
    after = gauging.gauge_reading(snap, "hz", 1.0e6, 303.15, at=T0 + 3600)
    assert after["propellant_kg"] == pytest.approx(33.503, abs=0.001)
    assert after["details"]["pressurant_kg"] == pytest.approx(0.0732995, abs=1e-7)
    assert after["bookkeeping_kg"] == pytest.approx(33.5)
    # Bookkeeping sigma, the sampler's model (issue 11.14): a burn quoted in propellant carries no Isp bias,
    # only its own 1 % (core.sigmas default, project choice) of 26.5 kg = 0.265 kg, RSS the 0.06 kg load.
    assert after["bookkeeping_sigma_kg"] == pytest.approx((0.06 ** 2 + 0.265 ** 2) ** 0.5, rel=1e-9)
    assert not after["flagged"] and abs(after["difference_sigma"]) < 0.1
    # Dated before the burn, the same reading is compared with the full load and flagged.
    before = gauging.gauge_reading(snap, "hz", 1.0e6, 303.15, at=T0 - 3600)
    assert before["bookkeeping_kg"] == 60.0 and before["bookkeeping_sigma_kg"] == pytest.approx(0.06)
    assert before["flagged"] and before["difference_sigma"] < -3


def test_dry_run_writes_nothing_and_a_record_is_read_back_without_recomputing(led):
    size = led.file.head()
    out = gauging.record_gauge(led, "hz", 1.0e6, 303.15, at=T0 + 3600, dry_run=True)
    assert out["id"] is None and out["dry_run"] and led.file.head() == size
    out = gauging.record_gauge(led, "hz", 1.0e6, 303.15, at=T0 + 3600, by="P. Ilves", note="after burn")
    assert out["id"] == 2
    g = views.status(led.snapshot())["tanks"]["hz"]["gauge"]
    assert g["id"] == 2 and g["adopted_by"] is None
    for key in ("propellant_kg", "sigma_kg", "bookkeeping_kg", "difference_kg", "difference_sigma", "flagged"):
        assert g[key] == out[key]


def test_rebaseline_adopts_the_combination_from_the_reading_time_on(led):
    g = gauging.record_gauge(led, "hz", 1.0e6, 303.15, at=T0 + 3600)
    led.record("burn", {"engine": "thr", "propellant": 3.0}, at=T0 + 7200, by="test")
    with pytest.raises(InputError, match="--by is required"):
        gauging.record_rebaseline(led, "hz", g["id"], "  ")
    r = gauging.record_rebaseline(led, "hz", g["id"], "P. Ilves", reason="PVT after the burn")
    # Inverse variance of gauge and bookkeeping (both at the reading time).
    w_g, w_b = 1 / g["sigma_kg"] ** 2, 1 / g["bookkeeping_sigma_kg"] ** 2
    expected = (w_g * g["propellant_kg"] + w_b * g["bookkeeping_kg"]) / (w_g + w_b)
    assert r["remaining_kg"] == pytest.approx(expected) and r["sigma_kg"] == pytest.approx((w_g + w_b) ** -0.5)
    snap = led.snapshot()
    assert snap.state.remaining_kg[0] == pytest.approx(expected - 3.0)  # the later burn still counts
    assert views.status(snap)["tanks"]["hz"]["gauge"]["adopted_by"] == r["id"]
    with pytest.raises(InputError, match="already adopted"):
        gauging.record_rebaseline(led, "hz", g["id"], "P. Ilves")


def test_flagged_reading_needs_force_to_be_adopted(led):
    g = gauging.record_gauge(led, "hz", 1.0e6, 303.15, at=T0 - 3600)  # before the burn: flagged
    assert g["flagged"]
    head = led.file.head()
    with pytest.raises(InputError, match="--force"):
        gauging.record_rebaseline(led, "hz", g["id"], "P. Ilves")
    assert led.file.head() == head
    r = gauging.record_rebaseline(led, "hz", g["id"], "P. Ilves", force=True, reason="leak confirmed")
    assert r["forced"] is True


def test_bad_readings_are_refused_in_one_line(led):
    snap = led.snapshot()
    cases = [("nope", 1.0e6, 303.15, "unknown tank"),
             ("hz", 1.0e6, 400.0, "valid"),                        # outside the hydrazine correlation
             ("hz", 1.0e3, 293.15, "not above the propellant vapour pressure"),
             ("hz", 0.2e6, 293.15, "not below the tank volume"),  # more ullage than tank: empty
             ("hz", float("nan"), 293.15, "finite")]
    for tank_id, p, t, text in cases:
        with pytest.raises(InputError, match=text) as err:
            gauging.gauge_reading(snap, tank_id, p, t)
        assert "\n" not in str(err.value)
