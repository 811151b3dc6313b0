"""Low bounds in the console: the first paint never waits for the Monte Carlo; the engines panel shows its
progress, then each nominal figure with the low bound ``uncertainty.confidence_status`` gives for the same
snapshot, seed and sample count; a change of the ledger starts a new run. The check dialog gives the
three-way verdict with the probability (what ``uncertainty.confidence_check`` says for the same burn)."""
from __future__ import annotations

import threading

import pytest
from textual.widgets import Input, Static

from ledger.services import uncertainty
from ledger.tui import lows
from ledger.tui.app import make_app
from ledger.tui.dialogs.check import CheckDialog
from ledger.services.probtext import prob_text
from ledger.tui.widgets.state import EngineTable, TankGauges
from tui_support import lows_done, ready, run, type_text, until


def panels(app) -> str:
    return str(app.main.query_one(EngineTable).render()) + "\n" + str(app.main.query_one(TankGauges).render())


def test_first_paint_does_not_wait_then_low_bounds_appear_with_progress(ledger_path, monkeypatch):
    gate = threading.Event()
    real = uncertainty.confidence_status

    def held(snap, confidence, samples, seed, progress):  # the worker stops half way until released
        progress(samples // 2, samples)
        assert gate.wait(30)
        return real(snap, confidence, samples, seed, progress)
    monkeypatch.setattr(uncertainty, "confidence_status", held)

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(160, 48)) as pilot:
            await ready(app, pilot)  # painted and verified while the Monte Carlo is held
            await until(pilot, lambda: (app.lows.fraction or 0) > 0.4, what="progress")
            title = str(app.main.query_one("#engines-box").border_title)
            assert "⟳ 50%" in title
            assert "…" in panels(app) and "sampling" in panels(app)
            gate.set()
            await lows_done(app, pilot)
            ref = real(app.snap, lows.CONFIDENCE, lows.SAMPLES, lows.SEED)
            text = panels(app)
            for eid, e in ref["engines"].items():
                assert f"{e['dv_free_low_m_s']:,.1f}" in text, eid
                assert e["dv_free_low_m_s"] <= e["dv_free_m_s"]
            for tid, t in ref["tanks"].items():
                assert f"low {t['usable_low_kg']:,.1f}" in text, tid
            assert "low = 99% bound" in str(app.main.query_one("#engines-box").border_title)
            rows = [ln for ln in str(app.main.query_one(EngineTable).render()).splitlines()
                    if ln.split(" ")[0] in ref["engines"]]
            assert len(rows) == 2 and not any("…" in ln for ln in rows)
            assert f"reserves intact {prob_text(ref['reserves_probability'], ref['samples'])}" in panels(app)

    run(go())


def test_low_bounds_are_recomputed_after_the_ledger_changes(ledger_path):
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(160, 48)) as pilot:
            await lows_done(app, pilot)
            first = app.lows.result["engines"]["lae"]["dv_free_low_m_s"]
            app.write("burn", {"engine": "lae", "dv": 40.0}, by="ops")
            assert app.lows.result is None  # never the old bound beside the new nominal figure
            await lows_done(app, pilot)
            ref = uncertainty.confidence_status(app.snap, lows.CONFIDENCE, lows.SAMPLES, lows.SEED)
            now = app.lows.result["engines"]["lae"]["dv_free_low_m_s"]
            assert now == ref["engines"]["lae"]["dv_free_low_m_s"] and now < first
            assert f"{now:,.1f}" in panels(app)

    run(go())


def _check(app, pilot, dv: str):
    async def go():
        box = app.screen.query_one("#c-dv", Input)
        box.value = ""
        box.focus()
        await type_text(pilot, dv)
        await until(pilot, lambda: app.screen.confidence is not None, what="confidence check")
        return app.screen.confidence, str(app.screen.query_one("#conf-result", Static).render())
    return go()


def test_check_gives_feasible_marginal_and_infeasible_with_the_probability(ledger_path):
    """A burn well inside dv free is feasible; one between the low bound of dv free (after the pending plans)
    and its nominal value is marginal by construction; one beyond the nominal value is infeasible."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            snap = app.snap
            zero = uncertainty.confidence_check(snap, "lae", 0.0, lows.CONFIDENCE, samples=lows.SAMPLES,
                                                seed=lows.SEED)
            nominal, low = zero["dv_free_after_m_s"], zero["dv_free_after_low_m_s"]
            assert low < nominal
            await pilot.press("k")
            await pilot.pause(0.1)
            assert isinstance(app.screen, CheckDialog)
            for dv, verdict, label in ((5.0, "feasible", "FEASIBLE"), ((low + nominal) / 2, "marginal", "MARGINAL"),
                                       (nominal + 50.0, "infeasible", "INFEASIBLE")):
                res, text = await _check(app, pilot, f"{dv:.3f} m/s")
                ref = uncertainty.confidence_check(snap, "lae", round(dv, 3), lows.CONFIDENCE, samples=lows.SAMPLES,
                                                   seed=lows.SEED)
                assert res["verdict"] == ref["verdict"] == verdict
                assert res["probability"] == pytest.approx(ref["probability"], abs=0)
                # issue 11.13: the text carries only the precision the samples support (Wilson 1927 when no
                # sample fails), never "1.0000 ± 0.0000"
                assert label in text and prob_text(ref["probability"], ref["samples"]) in text
                assert "± 0.0000" not in text

    run(go())


def test_check_verdict_and_figures_clear_when_the_input_empties_or_turns_invalid(ledger_path):
    """Issue 11 point 1: after a verdict for 5 m/s, emptying the delta-v or typing an invalid one leaves no
    verdict, probability or figure on screen (a stale verdict beside an error misleads at go/no-go)."""
    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            await pilot.press("k")
            await pilot.pause(0.1)
            assert isinstance(app.screen, CheckDialog)
            res, text = await _check(app, pilot, "5 m/s")
            assert "FEASIBLE" in text and "p " in text
            box = app.screen.query_one("#c-dv", Input)
            for bad in ("", "5 parsecs", "-"):
                box.value = bad
                await pilot.pause(0.05)
                conf = str(app.screen.query_one("#conf-result", Static).render())
                body = str(app.screen.query_one("#check-result", Static).render())
                assert app.screen.confidence is None and app.screen.result is None, bad
                assert "FEASIBLE" not in conf and "confidence" not in conf, (bad, conf)
                assert "FEASIBLE" not in body and "kg" not in body and "m/s" not in body, (bad, body)
            await pilot.pause(lows_wait := 0.6)  # no late verdict arrives for the emptied field either
            assert app.screen.confidence is None and "FEASIBLE" not in str(
                app.screen.query_one("#conf-result", Static).render()), lows_wait

    run(go())
