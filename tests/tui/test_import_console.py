"""The console's import screen (issue 14 point 5): pick a file, see the dry run, confirm; and the entry
detail's "imported from" line. The message is written with ccsds-ndm-py 0.0.9's writer (CCSDS 502.0-B-3
OCM); |DV| is checked against numpy.linalg.norm of its components."""
from __future__ import annotations

import numpy as np
from textual.widgets import Input, Static

import ccsds_ndm
from ledger.tui.app import make_app
from ledger.tui.dialogs.importing import ImportForm
from tui_support import count, ready, run, type_text


def _ocm(path: str) -> str:
    header = ccsds_ndm.OdmHeader(creation_date="2026-11-30T09:00:00", originator="FDS", message_id="PLAN-0042")
    meta = ccsds_ndm.OcmMetadata(epoch_tzero="2026-03-01T00:00:00", time_system="UTC", object_name="Testbed-7")
    data = ccsds_ndm.OcmData()
    data.man = [ccsds_ndm.OcmManeuverParameters(
        man_id="NSK-7", man_device_id="lae", man_composition="TIME_ABSOLUTE, DV_X, DV_Y, DV_Z",
        man_ref_frame="RSW_ROTATING", man_basis="PLANNED",
        man_lines=[ccsds_ndm.ManLine(epoch="2026-03-02T10:00:00", values=["0.0", "0.003", "0.004"])])]
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(ccsds_ndm.Ocm(header, ccsds_ndm.OcmSegment(meta, data)).to_str("kvn"))
    return path


def test_import_screen_shows_the_dry_run_then_records_once_and_the_detail_says_where_from(ledger_path, tmp_path):
    msg = _ocm(str(tmp_path / "plan-0042.ocm"))

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            before = count(ledger_path)
            await pilot.press("i")
            await pilot.pause(0.1)
            assert isinstance(app.screen, ImportForm)
            app.screen.query_one("#f-file", Input).focus()
            await type_text(pilot, msg)
            await pilot.press("ctrl+s")  # the dry run
            for _ in range(100):
                await pilot.pause(0.05)
                if app.screen.previewed is not None:
                    break
            shown = str(app.screen.query_one("#import-result", Static).render())
            assert "would record: plan lae dv 5.0000 m/s" in shown and "MAN_ID NSK-7" in shown
            assert count(ledger_path) == before  # nothing written by the dry run
            await pilot.press("ctrl+s")  # confirm
            for _ in range(100):
                await pilot.pause(0.05)
                if not isinstance(app.screen, ImportForm):
                    break
            assert count(ledger_path) == before + 1
            seq = app.snap.entries[-1].seq
            plan = app.snap.resolved.effective[seq]
            # |(0, 0.003, 0.004)| km/s = 5 m/s (numpy.linalg.norm x 1000)
            assert plan.get("dv") == float(np.linalg.norm([0.0, 0.003, 0.004]) * 1000)
            app.open_detail(seq)
            await pilot.pause(0.1)
            body = str(app.screen.query_one("#detail", Static).render())
            assert "imported from" in body and "plan-0042.ocm, MESSAGE_ID PLAN-0042, MAN_ID NSK-7, sha256" in body
            await pilot.press("escape")
            await pilot.pause(0.05)
            # the same file again: the dry run says so and nothing is recorded
            await pilot.press("i")
            await pilot.pause(0.1)
            app.screen.query_one("#f-file", Input).focus()
            await type_text(pilot, msg)
            await pilot.press("ctrl+s")
            for _ in range(100):
                await pilot.pause(0.05)
                if app.screen.previewed is not None:
                    break
            assert "already imported" in str(app.screen.query_one("#import-result", Static).render())
            await pilot.press("ctrl+s")
            await pilot.pause(0.1)
            assert count(ledger_path) == before + 1

    run(go())


def test_a_bad_file_is_shown_in_the_form_and_records_nothing(ledger_path, tmp_path):
    bad = tmp_path / "bad.ocm"
    bad.write_text("CCSDS_OCM_VERS = 9.0\n")

    async def go():
        app = make_app(ledger_path)
        async with app.run_test(size=(100, 40)) as pilot:
            await ready(app, pilot)
            before = count(ledger_path)
            await pilot.press("i")
            await pilot.pause(0.1)
            app.screen.query_one("#f-file", Input).focus()
            await type_text(pilot, str(bad))
            await pilot.press("ctrl+s")
            for _ in range(100):
                await pilot.pause(0.05)
                if str(app.screen.query_one("#form-error", Static).render()).strip():
                    break
            assert "bad.ocm" in str(app.screen.query_one("#form-error", Static).render())
            assert count(ledger_path) == before and isinstance(app.screen, ImportForm)

    run(go())
