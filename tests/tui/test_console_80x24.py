"""Issue 11 point 10 at 80x24: plan states told apart by glyph and word; the handover preview fits the
width with its last column's header visible; the trend shows one engine at a time with a legend and
dates that do not run into the labels; the colours each carry one meaning."""
from __future__ import annotations

from ledger.services import approvals
from ledger.services.ledger import Ledger
from ledger.tui import fmt
from ledger.tui.app import make_app
from ledger.tui.widgets.grid import LedgerGrid
from tui_support import ready, run, until

SIZE = (80, 24)


def test_plan_states_have_their_own_glyph_and_word(ledger_path):
    # the test ledger: plan 1 executed, 11 withdrawn, 13 pending; 14 is rejected here
    approvals.decide(Ledger(ledger_path), "reject", 14, by="F. Lead", note="phasing not needed", samples=1000)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=SIZE) as pilot:
            await ready(app, pilot)
            await until(pilot, lambda: app.main.approvals.get(14) == "rejected", what="approval states")
            await pilot.press("f", "f")  # all kinds -> burns -> plans
            await pilot.pause(0.3)
            grid = app.main.query_one(LedgerGrid)
            lines = grid.render().plain.split("\n")
            by_id = {line.split()[0]: line for line in lines[1:] if line.strip()}
            assert set(by_id) == {"1", "11", "13", "14"}, lines
            want = {"1": "executed", "11": "withdrawn", "13": "pending", "14": "rejected"}
            seen = set()
            for pid, state in want.items():
                sym, word = fmt.PLAN_STATE_TAG[state]
                assert f"{sym} PLAN {word}" in by_id[pid], by_id[pid]
                seen.add(sym)
            assert len(seen) == 4  # four different glyphs as well as four words
            assert "Decision support only" in str(app.main.query_one("#caution").render())

    run(go())


def test_handover_preview_fits_80x24_with_the_last_column_header(ledger_path):
    """The text report is 80 columns; the preview at 80x24 has fewer cells (padding, scrollbar), and its
    last column was cut. It now wraps to the room it has; the tables' last headers stay whole."""
    from textual.containers import VerticalScroll  # noqa: PLC0415
    from textual.widgets import Input, Static  # noqa: PLC0415

    from ledger.tui.screens.handover import HandoverScreen  # noqa: PLC0415
    from tui_support import type_text  # noqa: PLC0415

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=SIZE) as pilot:
            await ready(app, pilot)
            await pilot.press("h")
            await pilot.pause(0.2)
            screen = app.screen
            assert isinstance(screen, HandoverScreen)
            screen.query_one("#h-from", Input).value = "A. Day"
            screen.query_one("#h-to", Input).focus()
            await type_text(pilot, "B. Night")
            await until(pilot, lambda: screen.report is not None, what="report")
            await pilot.pause(0.2)
            body = screen.query_one("#handover-body", VerticalScroll)
            room = body.scrollable_content_region.width  # cells left of the scrollbar, inside the padding
            text = str(screen.query_one("#handover-text", Static).render())
            lines = text.split("\n")
            assert room < 80 and max(len(x) for x in lines) <= room, (room, max(lines, key=len))
            # the state tables' last column headers are on their header lines, whole
            assert any(x.rstrip().endswith("residual kg") for x in lines)
            assert any(x.rstrip().endswith("limiting tank") for x in lines)
            assert "Decision support only" in text
            assert "Decision support only" in str(screen.query_one("#caution").render())

    run(go())


def test_trend_at_80x24_one_engine_at_a_time_with_legend_and_clear_dates(ledger_path):
    """Four stacked dv charts left each two rows at 80x24 and their tick labels ran into the dates. Now one
    engine's chart at a time ('e' steps on), line names in a legend line, dates on their own axis line."""
    import re  # noqa: PLC0415

    from textual_plotext import PlotextPlot  # noqa: PLC0415

    from ledger.tui.screens.trend import TrendScreen  # noqa: PLC0415

    date = re.compile(r"\d{4}-\d{2}-\d{2}")

    def axis_ok(lines: list[str]) -> None:
        dated = [x for x in lines if date.search(x)]
        assert len(dated) == 1, lines  # the dates are on one line of their own
        assert len(date.findall(dated[0])) >= 3
        assert re.fullmatch(r"(\s+\d{4}-\d{2}-\d{2})+\s*", dated[0]), dated[0]  # nothing else on it, each whole
        words = ("total", "free", "reserves", "remaining", "UTC")  # titles and names live outside the chart
        assert not any(w in x for w in words for x in lines), lines

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=SIZE) as pilot:
            await ready(app, pilot)
            await pilot.press("t")
            await pilot.pause(0.5)
            screen = app.screen
            assert isinstance(screen, TrendScreen)
            legend = str(screen.query_one("#trend-legend").render())
            for name in ("• total", "x ox", "+ fuel", "o hyd"):  # the test craft's tanks (tests/tui/craft.yaml)
                assert name in legend, legend
            prop, dv = screen.query_one("#plot-prop", PlotextPlot), screen.query_one("#plot-dv", PlotextPlot)
            for plot in (prop, dv):
                assert plot.size.height >= 6  # room for data between the frame and the axis line
                axis_ok(plot.render().plain.split("\n"))
            engines = [e.id for e in app.snap.craft.engines]
            assert len(engines) >= 2
            assert f"dv free for {engines[0]}" in str(dv.border_title)
            await pilot.press("e")
            await pilot.pause(0.3)
            assert f"dv free for {engines[1]}" in str(dv.border_title)
            axis_ok(dv.render().plain.split("\n"))
            squeezed = str(screen.query_one("#keys").render()).replace(" ", "")
            assert "eNextengine" in squeezed  # a whole-word key label
            assert "Decision support only" in str(screen.query_one("#caution").render())

    run(go())


def test_each_colour_has_one_meaning(ledger_path):
    """Orange was the theme's accent (titles, keys), the safety caution's colour, the reserve cells of the
    tank bars and the marginal verdict at once. Now: orange only for 'look again' (marginal, stale approval,
    warnings); reserves, titles and the caution each have their own style (docs/screens/colours.md)."""
    from rich.color import Color  # noqa: PLC0415

    from ledger.tui.dialogs.check import VERDICT_TAG  # noqa: PLC0415
    from ledger.tui.widgets.watch import VERDICT_WORD  # noqa: PLC0415

    def hexof(style: str) -> str:
        """The colour a rich style string paints (the background for 'x on y')."""
        from rich.style import Style  # noqa: PLC0415
        st = Style.parse(style)
        col = st.bgcolor if " on " in style else st.color
        return col.get_truecolor().hex.lower()

    attention = fmt.COLOUR["attention"].lower()
    # one meaning, one colour: every 'look again' mark is the attention colour
    assert hexof(VERDICT_TAG["marginal"][1]) == attention
    assert hexof(VERDICT_WORD["marginal"][1]) == attention
    assert hexof(fmt.APPROVAL_TAG["stale"][2]) == attention
    reserve = hexof(fmt.GLYPH_STYLE[fmt.RESERVE])

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=SIZE) as pilot:
            await ready(app, pilot)
            caution = app.main.query_one("#caution")
            caution_fg = caution.styles.color.hex.lower()[:7]
            variables = app.get_css_variables()
            accent = Color.parse(variables["accent"]).get_truecolor().hex.lower()
            title = app.main.query_one("#watch-box").styles.border_title_color.hex.lower()[:7]
            assert accent == title  # the titles take the accent
            # the previously shared meanings each have their own colour now
            colours = {"attention": attention, "reserve": reserve, "accent": accent, "caution": caution_fg}
            assert len(set(colours.values())) == 4, colours
            assert caution.styles.text_style.italic
            # the bar really paints its reserve cells in the reserve colour
            bar = fmt.gauge({"load_kg": 100.0, "remaining_kg": 60.0, "residual_kg": 2.0, "reserve_kg": 10.0}, 20)
            painted = {bar.plain[s.start]: s.style for s in bar.spans}
            assert hexof(str(painted[fmt.RESERVE])) == reserve
            assert "Decision support only" in str(caution.render())

    run(go())


def test_burn_form_shows_the_plans_execution_warnings_before_recording(ledger_path):
    """Issue 11 point 3: the burn form shows what recording would store against the plan (services.execution)
    before it records; a warning that appears only at submit (another process withdrew the plan) stops once
    for confirmation; the burn is then recorded with it (never refused)."""
    from textual.widgets import Input, Select, Static  # noqa: PLC0415

    from ledger.tui.dialogs.base import FormDialog  # noqa: PLC0415
    from tui_support import count, type_text  # noqa: PLC0415

    before = count(ledger_path)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=SIZE) as pilot:
            await ready(app, pilot)
            await pilot.press("b")
            await pilot.pause(0.2)
            form = app.screen
            assert isinstance(form, FormDialog)
            form.query_one("#f-plan", Select).value = 13  # plan 13: lae 8 m/s, never approved
            await pilot.pause(0.1)
            box = form.query_one("#f-amount", Input)
            box.value = ""
            box.focus()
            await type_text(pilot, "5 m/s")  # |5 - 8| = 3 m/s > max(10 % of 8, 0.05) = 0.8 m/s
            await pilot.pause(0.1)
            shown = str(form.query_one("#burn-warnings", Static).render())
            assert "plan #13 was never approved" in shown and "achieved dv 5.000 m/s differs" in shown, shown
            assert "Record anyway" in str(form.query_one("#ok").label)
            assert count(ledger_path) == before  # shown, nothing written yet
            Ledger(ledger_path).record("withdraw", {"plan": 13}, by="other")  # another process, meanwhile
            await until(pilot, lambda: 13 in app.snap.resolved.withdrawn, what="the outside withdrawal")
            await pilot.press("ctrl+s")
            await pilot.pause(0.2)
            assert app.screen is form  # a new warning: shown first, for confirmation
            shown = str(form.query_one("#burn-warnings", Static).render())
            assert "Confirm" in shown and "plan #13 was withdrawn" in shown, shown
            assert "Decision support only" in str(form.query_one("#form-caution", Static).render())
            assert count(ledger_path) == before + 1  # only the other process's withdrawal
            await pilot.press("ctrl+s")
            await pilot.pause(0.3)
            assert not isinstance(app.screen, FormDialog)

    run(go())
    e = Ledger(ledger_path).snapshot().entries[-1]
    assert e.kind == "burn" and e.data["dv"] == 5.0
    assert any("withdrawn" in w for w in e.data["plan_warnings"])
    assert any("achieved dv 5.000" in w for w in e.data["plan_warnings"])
