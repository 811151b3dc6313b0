"""The fleet's shift handover: per craft its fleet row and what changed since its last handover.

Each craft's part is that craft's own handover (``services.handover.assemble``, the window since its
previous handover), so the fleet report and the single-craft report say the same thing; the summary
row is its fleet row (``services.fleet``), from a folder or a database (``fleetsource``). Recording
appends a handover entry to every readable craft and backs each up, exactly as ``propledger handover`` does for one. A ledger that cannot be read is
listed with its error and nothing is written to it.
"""
from __future__ import annotations

from typing import Any

from ..errors import LedgerError
from . import fleet, handover
from .fleetsource import address
from .ledger import Ledger
from .timefmt import iso, now as clock
from .views import CAUTION


def assemble(source, *, from_name: str | None, to_name: str | None,
             margin: float = fleet.DEFAULT_MARGIN_M_S, now: float | None = None,
             workers: int = fleet.WORKERS) -> dict[str, Any]:
    """The fleet handover as plain data; reads only (``record`` writes). The names are checked first, the
    way the single-craft handover checks them, so a missing name is one error, not one per craft."""
    names = handover.shift_names(from_name, to_name)
    end = clock() if now is None else float(now)
    rows = fleet.view(fleet.rows(source, workers=workers), margin=margin, now=end)
    craft = []
    for row in rows:
        part: dict[str, Any] = {"row": row, "report": None, "error": row["error"]}
        if row["state"] != "unreadable":
            try:
                part["report"] = handover.assemble(Ledger(address(source, row["ledger"])), from_name=names["from"],
                                                   to_name=names["to"], now=end)
            except LedgerError as exc:
                part["error"] = str(exc)
        craft.append(part)
    return {"title": "Fleet handover", "fleet": source.label, "generated": iso(round(end)),
            "from": names["from"], "to": names["to"], "margin_m_s": margin, "summary": fleet.summary(rows),
            "craft": craft, "warnings": [], "caution": CAUTION}


def record(report: dict[str, Any], *, note: str | None = None, source=None) -> dict[str, Any]:
    """Append a handover entry to every craft whose report was assembled, then back each up (``source``:
    the one assembled from, which opens a database craft by its full address)."""
    for part in report["craft"]:
        if part["report"] is None:
            continue
        try:
            where = part["row"]["ledger"]
            handover.record(Ledger(address(source, where) if source is not None else where), part["report"],
                            note=note)
        except LedgerError as exc:
            part["error"] = f"handover not recorded: {exc}"
            report["warnings"].append(f"{part['row']['craft']}: handover not recorded: {exc}")
            continue
        if part["report"]["record"].get("backup_failed"):
            report["warnings"].append(f"{part['row']['craft']}: {part['report']['warnings'][-1]}")
    return report
