"""The ledger window: a page of entries around the user's place, never the whole ledger.

The grid only ever holds one page (as many rows as fit); a 20k-entry ledger is never handed to a
widget whole. The window remembers where the user is: following the newest entries, or anchored on an entry, and the
entry under the cursor; a reload keeps both.
"""
from __future__ import annotations

from typing import Any, Mapping, Sequence

from rich.text import Text

from .. import fmt
from .grid import PAGE


class Window:
    """Which slice of the selected entries is on screen: ``end`` (exclusive) and ``size``."""

    def __init__(self) -> None:
        self.sel: Sequence[int] = ()
        self.end = 0
        self.size = 20
        self.follow = True          # stick to the newest entry
        self.anchor: int | None = None  # seq of the last row shown when not following
        self.cursor_seq: int | None = None

    def reselect(self, sel: Sequence[int]) -> None:
        """New selection (reload or filter): keep following, or keep the anchor row last on screen."""
        self.sel = sel
        if self.follow or self.anchor is None:
            self.end = len(sel)
            return
        where = {s: i for i, s in enumerate(sel)}
        self.end = where[self.anchor] + 1 if self.anchor in where else len(sel)
        self.follow = self.end >= len(sel)

    def move(self, step: int) -> None:
        if abs(step) == PAGE:
            step = self.size if step > 0 else -self.size
        n = len(self.sel)
        self.end = max(min(self.size, n), min(n, self.end + step))
        self.follow = self.end >= n
        self.anchor = self.sel[self.end - 1] if n else None

    @property
    def start(self) -> int:
        return max(0, self.end - self.size)

    def seqs(self) -> Sequence[int]:
        return self.sel[self.start:self.end]


def columns(tank_ids: Sequence[str], narrow: bool = False) -> list[tuple[str, str]]:
    """Column labels and keys; narrow terminals drop the year (the detail view has it) to fit 80 columns."""
    cols = [("#", "id"), ("kind", "kind"), ("MM-DD UTC" if narrow else "at (UTC)", "at"),
            ("eng" if narrow else "engine", "engine"), ("amount", "amount"), ("mass kg", "mass")]
    cols += [(f"{t} kg", f"tank:{t}") for t in tank_ids]
    cols += [("status", "status"), ("by", "by"), ("note", "note")]
    return cols


def status_text(row: dict[str, Any], data: Mapping[str, Any] | None = None, approval: str | None = None) -> str:
    """The status column: plan state and approval, what a correction fixes, a gauge reading's difference
    from the bookkeeping, which reading a re-baseline adopts; then superseded, late, plan link."""
    data = data or {}
    kind = row["kind"]
    status = ""
    if kind == "plan":
        status = row.get("state", "")
        if status == "pending" and approval:
            sym, words, _ = fmt.approval_tag(approval)
            status += f" {sym} {words}"
    elif kind == "correct":
        status = f"fixes #{row.get('corrects')}"
    elif kind == "gauge" and data.get("phase") == "two-phase":
        status = "two-phase: no estimate"
    elif kind == "gauge" and data.get("difference_sigma") is not None:
        status = f"{data['difference_sigma']:+.1f}σ " + ("⚠ BEYOND 3σ" if data.get("flagged") else "within 3σ")
    elif kind == "rebaseline":
        status = f"adopts #{row.get('gauge')}" + (" (forced)" if data.get("forced") else "")
    elif kind == "handover" and data.get("window_start") is not None:
        status = f"window from {fmt.when_t(float(data['window_start']))}"
    if row.get("superseded"):
        status = "superseded" if not status else status + " (superseded)"
    if row.get("late"):
        status = (status + " late").strip()
    if row.get("plan") is not None:
        status = (status + f" plan #{row['plan']}").strip()
    return status


def cells(row: dict[str, Any], tank_ids: Sequence[str], narrow: bool = False,
          data: Mapping[str, Any] | None = None, approval: str | None = None) -> list[Any]:
    """Table cells for one ``views.log`` row (``data``: the entry's stored fields, for the status)."""
    status = status_text(row, data, approval)
    amount = row.get("amount") or ""
    if data and row["kind"] == "gauge" and data.get("propellant_kg") is not None:  # ± rather than +-
        amount = f"{data.get('tank')} {data['propellant_kg']:,.2f}±{data.get('sigma_kg', 0.0):,.2f} kg"
    elif data and row["kind"] == "rebaseline" and data.get("remaining_kg") is not None:
        amount = f"{data.get('tank')} ≡ {data['remaining_kg']:,.2f} kg"
    drawn = row.get("drawn_kg") or {}
    mass = row.get("mass_after_kg")
    out: list[Any] = [
        Text(str(row["id"]), justify="right"),
        (fmt.plan_text(row.get("state"), approval, row.get("superseded", False)) if row["kind"] == "plan"
         else fmt.kind_text(row["kind"], row.get("superseded", False))),
        fmt.when(row.get("at"))[5:] if narrow else fmt.when(row.get("at")),
        row.get("engine") or "",
        Text(amount, justify="right"),
        Text(fmt.kg(mass, 2) if mass is not None else "", justify="right"),
    ]
    adjusted = row.get("adjusted_kg") or {}
    for t in tank_ids:
        x, adj = drawn.get(t), adjusted.get(t)
        out.append(Text(f"{-x:,.3f}" if x else f"{adj:+,.3f}" if adj else "", justify="right"))
    note = row.get("reason") if row["kind"] in ("correct", "rebaseline") and row.get("reason") else row.get("note")
    out += [status, row.get("by") or "", (note or "").replace("\n", " ")[:60]]
    return out
