"""Small builders shared by the tests (invented test craft; no scenario data)."""
from __future__ import annotations

from ledger.core.craft import Craft, Engine, Reserve, Tank
from ledger.core.entries import Entry

T0 = 1_767_225_600.0  # 2026-01-01T00:00:00Z


def biprop(reserve_dv: float = 0.0, residual=(4.0, 3.0)) -> Craft:
    """A two-tank MMH/MON craft with a main engine and canted thrusters (invented numbers)."""
    reserves = (Reserve("eol", "thr", reserve_dv),) if reserve_dv else ()
    return Craft(
        name="Test biprop", dry_mass_kg=800.0,
        tanks=(Tank("ox", "MON-3", 300.0, residual[0]), Tank("fuel", "MMH", 190.0, residual[1])),
        engines=(Engine("main", 320.0, 440.0, {"ox": 1.65, "fuel": 1.0}),
                 Engine("thr", 290.0, 20.0, {"ox": 1.65, "fuel": 1.0}, cant_deg=10.0)),
        reserves=reserves,
    )


def ev(seq: int, kind: str, at: float = T0, **data) -> Entry:
    return Entry(seq=seq, kind=kind, at=at, recorded=at, by="test", note="", data=data)
