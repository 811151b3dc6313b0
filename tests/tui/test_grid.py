"""The ledger grid's columns: whole columns while they fit, then one more cut with '…' when at least
MIN_PART cells are left for it, never a sliver; '›' says there is more to the right."""
from __future__ import annotations

from textual.app import App, ComposeResult

from ledger.tui.widgets.grid import MIN_PART, LedgerGrid
from tui_support import run

COLUMNS = ["#", "kind", "status"]
ROWS = [("1", ["1", "BURN", "pending · undecided"]), ("2", ["2", "PLAN", "withdrawn"])]


class GridApp(App):
    def __init__(self, width: int):
        super().__init__()
        self.grid_width = width

    def compose(self) -> ComposeResult:
        grid = LedgerGrid(id="g")
        grid.styles.width = self.grid_width
        yield grid


def lines_at(width: int) -> list[str]:
    async def go():
        app = GridApp(width)
        async with app.run_test(size=(80, 10)) as pilot:
            grid = app.query_one(LedgerGrid)
            grid.set_page(COLUMNS, ROWS, 0)
            await pilot.pause(0.05)
            return grid.render().plain.split("\n")
    return run(go())


def test_all_columns_whole_when_they_fit():
    head, first, _ = lines_at(60)
    assert "status" in head and "pending · undecided" in first and "›" not in head


def test_a_column_that_does_not_fit_whole_is_cut_with_an_ellipsis():
    # '#' (1) and 'kind' (4) take 3 + 6 cells with their padding; a 24-cell grid leaves 13 (less the edge and
    # '›'), so status gets 11 cells with its padding
    head, first, second = lines_at(24)
    assert "status" in head and head.rstrip().endswith("›")
    assert "pending" in first and first.rstrip().endswith("…") and "withdrawn" in second


def test_no_sliver_of_a_column():
    # fewer than MIN_PART + 2 cells left: the column stays off screen, '›' says so
    width = 3 + 6 + MIN_PART + 1
    head, first, _ = lines_at(width)
    assert "status" not in head and "pending" not in first and head.rstrip().endswith("›")
