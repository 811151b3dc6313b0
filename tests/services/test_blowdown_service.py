"""Table engines through the services: warnings outside the table and the qualified range (every entry
that fires there), an executed firing always recorded, and the handover's pressure line.

Outside check: the warned pressures are the tank model's, which tests/core/test_blowdown.py checks
against CoolProp and scipy; here the wording and the never-refuse rule (common practice for an executed
burn: record it, warn when it contradicts the model)."""
import pytest

from ledger import reports
from ledger.services import handover, scenario
from ledger.services.craftfile import craft_from_document
from ledger.services.ledger import Ledger, create

pytest.importorskip("CoolProp")

DOC = {
    "craft": {"name": "B", "dry_mass": "100 kg"},
    "tanks": [{"id": "hyd", "fluid": "hydrazine", "load": "20 kg", "residual": "0.5 kg", "volume": "30 L",
               "pressurant": {"gas": "helium", "pressure": "22 bar", "temperature": "20 degC"}}],
    "engines": [{"id": "mono", "feeds": {"hyd": 1},
                 "performance": {"pressure": ["10 bar", "15 bar", "22 bar"], "thrust": ["0.48 N", "0.71 N", "1.02 N"],
                                 "isp": ["218.3 s", "226.4 s", "231.5 s"]},
                 "qualified_pressure": ["12 bar", "24 bar"]}],
}


def test_firings_below_the_table_and_the_qualified_range_warn_on_every_entry(tmp_path):
    path = str(tmp_path / "l.json")
    create(path, craft_from_document(DOC, "doc"))
    led = Ledger(path)
    for k in range(4):  # 4.2, 3.3, 2.8, 2.5 kg: from 22 bar to 9.7 bar
        _, warnings = led.record("use", {"engine": "mono", "duration": 11000.0}, at=1.7e9 + 3600 * k, by="t")
    snap = led.snapshot()
    assert len(snap.entries) == 4  # recorded, never refused
    last = snap.entries[-1].seq
    assert any(f"entry #{last} (engine mono): feed pressure" in w and "outside its performance table" in w
               for w in snap.warnings)
    assert any(f"entry #{last} fires engine mono at" in w and "outside its qualified inlet pressure" in w
               for w in snap.warnings)
    assert not any("entry #1 " in w for w in snap.warnings)  # the first firing stays within both


def test_handover_text_gives_the_predicted_pressures(tmp_path):
    led = scenario.build(scenario.bundled()["lunar-orbiter"], str(tmp_path / "l.json"))
    report = handover.assemble(led, from_name="a", to_name="b")
    text = reports.render(report, "text")
    assert "Predicted pressure (blowdown, from the bookkeeping): hz-1 6." in text
