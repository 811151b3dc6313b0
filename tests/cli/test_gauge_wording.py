"""'cannot be gauged' names exactly what the craft file lacks (issue 11 point 12). What PVT gauging of a
blowdown tank needs (tank volume plus the pressurant's loaded pressure and temperature) and what a
gas-stored tank needs (its volume, for mass = density(P, T) x volume): common practice for
pressure-volume-temperature gauging."""
from __future__ import annotations

import textwrap
from types import SimpleNamespace

from ledger.services import craftfile
from ledger.tui.dialogs.gauge import tank_options

CRAFT = textwrap.dedent("""\
    craft: {name: Gauge wording craft, dry_mass: 800}
    tanks:
      - {id: bare, fluid: MMH, load: 100, residual: 1}
      - {id: vol, fluid: MMH, load: 100, residual: 1, volume: "0.12 m^3"}
      - {id: xe, fluid: xenon, load: 50, residual: 1}
    engines:
      - {id: e1, isp: 290, thrust: 10, feeds: {bare: 1, vol: 1}}
    """)


def test_cannot_be_gauged_names_what_is_missing(tmp_path):
    path = tmp_path / "craft.yaml"
    path.write_text(CRAFT)
    craft = craftfile.load_craft(str(path))
    labels = dict((tid, text) for text, tid in tank_options(SimpleNamespace(craft=craft)))
    assert "no volume and no pressurant" in labels["bare"]
    assert "no pressurant" in labels["vol"] and "volume" not in labels["vol"].split("cannot")[1]
    assert "no volume" in labels["xe"] and "pressurant" not in labels["xe"]
