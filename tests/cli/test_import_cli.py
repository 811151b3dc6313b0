"""propledger import / export (issue 14): a plan as an OCM, its reconstruction as a second OCM and a day of
thruster firings as a CSV land as the right entries exactly once; bad input records nothing; the export
reads back with the library and imports as nothing new.

Outside references named beside the checks: CCSDS 502.0-B-3 (maneuver keywords, km/s for DV, annex G
example G-2), ccsds-ndm-py 0.0.9 (writer and reader), numpy.linalg.norm (|DV|), hashlib (SHA-256, FIPS 180-4),
IERS Bulletin C (TAI - UTC = 37 s since 2017-01-01).
"""
from __future__ import annotations

import contextlib
import hashlib
import io
import json
import os
import re
from datetime import datetime, timezone

import jsonschema
import numpy as np
import pytest

import ccsds_ndm
from ledger.cli import main
from tests.cli import schemas

DATA = os.path.join(os.path.dirname(os.path.dirname(__file__)), "data", "ccsds")
CRAFT = """\
craft:
  name: Test craft I-4
  dry_mass: 800 kg
tanks:
  - {id: ox, fluid: MON-3, load: 250 kg, residual: 3 kg}
  - {id: fuel, fluid: MMH, load: 150 kg, residual: 2 kg}
  - {id: hyd, fluid: hydrazine, load: 40 kg, residual: 0.5 kg}
engines:
  - {id: lae, isp: 318 s, thrust: 440 N, feeds: {ox: 1.65, fuel: 1}}
  - {id: rcs, isp: 220 s, thrust: 1 N, feeds: {hyd: 1}}
import:
  devices: {THR-A: lae, RCS-1A: rcs, RCS-1B: rcs}
  firings:
    columns: {time: utc, thruster: thr, on_time: on_ms, pulses: n}
    on_time_unit: ms
    pass_gap: 20 min
    orbit_period: 98 min
"""


def cli(*argv: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


def ocm(message_id: str, basis: str, lines, device: str = "THR-A", man_id: str = "M001", time_system: str = "UTC",
        composition: str = "TIME_ABSOLUTE, MAN_DURA, DELTA_MASS, DV_X, DV_Y, DV_Z, DV_MAG_SIGMA", extra=None,
        encoding: str = "kvn") -> str:
    """An OCM written by ccsds-ndm-py 0.0.9 (the library's writer)."""
    header = ccsds_ndm.OdmHeader(creation_date="2026-11-30T09:00:00", originator="FDS", message_id=message_id)
    meta = ccsds_ndm.OcmMetadata(epoch_tzero="2026-12-01T00:00:00", time_system=time_system, object_name="I-4")
    data = ccsds_ndm.OcmData()
    blocks = [(man_id, device, basis, lines)] + list(extra or [])
    data.man = [ccsds_ndm.OcmManeuverParameters(
        man_id=mid, man_device_id=dev, man_composition=composition, man_ref_frame="RSW_ROTATING", man_basis=b,
        man_lines=[ccsds_ndm.ManLine(epoch=e, values=v) for e, v in ls]) for mid, dev, b, ls in blocks]
    return ccsds_ndm.Ocm(header, ccsds_ndm.OcmSegment(meta, data)).to_str(encoding)


PLAN = [("2026-12-02T10:00:00", ["60.0", "-3.4", "0.0", "0.0012", "0.0005", "2.0"])]
RECON = [("2026-12-02T10:00:05", ["61.0", "-3.5", "0.0", "0.00125", "0.0005", "1.0"])]


def firings_csv() -> str:
    rows = ["utc,thr,on_ms,n"]
    for p, start in enumerate(("2026-12-02T01:00:00", "2026-12-02T07:00:00")):
        t0 = datetime.fromisoformat(start).replace(tzinfo=timezone.utc).timestamp()
        for k in range(6):
            t = datetime.fromtimestamp(t0 + 40 * k, tz=timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
            rows.append(f"{t},{'RCS-1A' if k % 2 else 'RCS-1B'},{100 + 10 * k},{2 + p}")
    return "\n".join(rows) + "\n"


@pytest.fixture()
def led(tmp_path):
    craft = tmp_path / "craft.yaml"
    craft.write_text(CRAFT)
    path = str(tmp_path / "i4.ledger.json")
    assert cli("--ledger", path, "init", "--craft", str(craft))[0] == 0
    return path


def write(tmp_path, name: str, text: str) -> str:
    p = tmp_path / name
    p.write_text(text)
    return str(p)


def log(led: str) -> list[dict]:
    code, out, _ = cli("--ledger", led, "log", "--json")
    assert code == 0
    return json.loads(out)


def test_plan_reconstruction_and_firings_land_once_with_their_sources(led, tmp_path):
    plan = write(tmp_path, "plan.ocm", ocm("PLAN-0042", "PLANNED", PLAN))
    recon = write(tmp_path, "recon.ocm", ocm("RECON-0042", "DETERMINED", RECON))
    day = write(tmp_path, "firings.csv", firings_csv())
    for _ in range(3):  # however often they are imported
        for f in (plan, recon, day):
            assert cli("--ledger", led, "import", f)[0] == 0
    code, out, _ = cli("--ledger", led, "import", plan)
    assert "already imported" in out and "nothing was recorded" in out
    rows = log(led)
    kinds = sorted(r["kind"] for r in rows)
    assert kinds == ["burn", "plan", "use", "use"]
    plan_row = next(r for r in rows if r["kind"] == "plan")
    burn = next(r for r in rows if r["kind"] == "burn")
    assert burn["data"]["plan"] == plan_row["id"]  # linked through MAN_ID M001
    # |DV| = norm of the message's components (numpy.linalg.norm), km/s x 1000 (CCSDS 502.0-B-3: DV in km/s)
    assert plan_row["data"]["dv_m_s"] == pytest.approx(np.linalg.norm([0.0, 0.0012, 0.0005]) * 1000, rel=1e-12)
    assert burn["data"]["dv_m_s"] == pytest.approx(np.linalg.norm([0.0, 0.00125, 0.0005]) * 1000, rel=1e-12)
    assert burn["data"]["sigma"] == pytest.approx(0.01 * burn["data"]["dv_m_s"], rel=1e-12)  # DV_MAG_SIGMA 1 %
    src = burn["data"]["source"]
    with open(recon, "rb") as fh:
        assert src["sha256"] == hashlib.sha256(fh.read()).hexdigest()  # FIPS 180-4 via hashlib
    assert (src["file"], src["message_id"], src["man_id"], src["basis"]) == ("recon.ocm", "RECON-0042", "M001", "DETERMINED")
    assert src["delta_mass_kg"] == -3.5
    uses = sorted((r for r in rows if r["kind"] == "use"), key=lambda r: r["at"])
    assert [u["data"]["duration_s"] for u in uses] == pytest.approx([0.75, 0.75])  # 100+110+...+150 ms
    assert [u["data"]["source"]["pulses"] for u in uses] == [12, 18]  # 6 rows x 2, 6 rows x 3
    assert [u["data"]["pulses"] for u in uses] == [12, 18]  # stored as pulse trains (pulse Isp, life totals)
    assert [u["data"]["on_time_s"] * u["data"]["pulses"] for u in uses] == pytest.approx([0.75, 0.75])
    assert [u["data"]["source"]["rows"] for u in uses] == ["2-7", "8-13"]


def test_a_changed_plan_is_a_correction_never_a_duplicate(led, tmp_path):
    assert cli("--ledger", led, "import", write(tmp_path, "p1.ocm", ocm("PLAN-1", "PLANNED", PLAN)))[0] == 0
    moved = [("2026-12-02T11:00:00", ["60.0", "-3.4", "0.0", "0.0016", "0.0", "2.0"])]
    code, out, _ = cli("--ledger", led, "import", write(tmp_path, "p2.ocm", ocm("PLAN-2", "PLANNED", moved)))
    assert code == 0 and "correction" in out
    rows = log(led)
    assert [r["kind"] for r in rows].count("plan") == 1
    fix = next(r for r in rows if r["kind"] == "correct")
    assert fix["changes"]["dv_m_s"] == pytest.approx(1.6) and fix["changes"]["at"] == "2026-12-02T11:00:00Z"
    assert fix["data"]["source"]["message_id"] == "PLAN-2"
    # the same content again, from a third message: nothing new
    code, out, _ = cli("--ledger", led, "import", write(tmp_path, "p3.ocm", ocm("PLAN-3", "PLANNED", moved)))
    assert "nothing new" in out and len(log(led)) == len(rows)


def _state(led: str):
    """The ledger and its head record (read caches beside them may appear on any read)."""
    out = []
    for p in (led, led + ".head"):
        with open(p, "rb") as fh:
            out.append(fh.read())
    return out


def test_dry_run_shows_exactly_what_is_recorded_and_writes_nothing(led, tmp_path):
    plan = write(tmp_path, "plan.ocm", ocm("PLAN-0042", "PLANNED", PLAN))
    recon = write(tmp_path, "recon.ocm", ocm("RECON-0042", "DETERMINED", RECON))
    before = _state(led)
    assert cli("--ledger", led, "import", plan)[0] == 0
    mid = _state(led)
    code, dry, err_dry = cli("--ledger", led, "import", recon, "--dry-run", "--json")
    assert code == 0 and _state(led) == mid
    code, real, err_real = cli("--ledger", led, "import", recon, "--json")
    dry, real = json.loads(dry), json.loads(real)
    assert dry["dry_run"] and not real["dry_run"]
    assert dry["entries"] == real["entries"] and dry["warnings"] == real["warnings"] and dry["warnings"]
    assert before != mid != _state(led)


@pytest.mark.parametrize("name, text, match", [
    ("v.ocm", ocm("X", "PLANNED", PLAN).replace("CCSDS_OCM_VERS       = 3.0", "CCSDS_OCM_VERS = 4.0"),
     r"v.ocm line 1: .*version.*expected one of: 3.0"),
    ("m.ocm", ocm("X", "PLANNED", PLAN).replace("MAN_DEVICE_ID        = THR-A\n", ""),
     r"m.ocm: .*Missing required field: MAN_DEVICE_ID"),
    ("u.ocm", ocm("X", "PLANNED", PLAN).replace("MAN_COMPOSITION", "MAN_UNITS = [s, kg, m/s, m/s, m/s, %]\nMAN_COMPOSITION"),
     r"u.ocm line \d+: MAN_UNITS: 'm/s' for DV_X; expected km/s"),
    ("t.ocm", ocm("X", "PLANNED", PLAN, time_system="UT1"), r"t.ocm line \d+: TIME_SYSTEM = UT1: expected UTC, or TAI"),
    ("d.ocm", ocm("X", "DETERMINED", [("2026-12-02T10:00:00", ["60", "0.5", "0", "0.001", "0", "1"])]),
     r"d.ocm line \d+: MAN_ID M001: DELTA_MASS = 0.5 kg is positive; expected a negative"),
    ("x.ocm", ocm("X", "PLANNED", PLAN, device="THR-Q"),
     r"x.ocm line \d+: MAN_ID M001: unknown device 'THR-Q' \(devices .*: THR-A, RCS-1A, RCS-1B; engines: lae, rcs\)"),
    ("c.csv", firings_csv().replace("on_ms", "ontime"), r"c.csv line 1: no column 'on_ms'"),
    ("b.csv", firings_csv().replace("RCS-1A", "RCS-9", 1), r"b.csv line 3: thr: unknown device 'RCS-9'"),
    ("all.ocm", ocm("X", "PLANNED", PLAN, extra=[("M002", "THR-Q", "PLANNED", PLAN)]), r"MAN_ID M002: unknown device"),
])
def test_bad_input_is_one_line_exit_2_and_records_nothing(led, tmp_path, name, text, match):
    f = write(tmp_path, name, text)
    before = _state(led)
    code, out, err = cli("--ledger", led, "import", f)
    assert code == 2 and out == ""
    line = err.strip()
    assert "\n" not in line and line.startswith("propledger: error: ") and line.count("propledger:") == 1
    assert re.search(match, line), line
    assert _state(led) == before  # all or nothing: the good block of all.ocm is not recorded either


def test_delta_mass_far_from_the_ledgers_figure_is_recorded_with_a_warning(led, tmp_path):
    lines = [("2026-12-02T10:00:05", ["61.0", "-9.0", "0.0", "0.00125", "0.0005", "1.0"])]
    code, out, err = cli("--ledger", led, "import", write(tmp_path, "r.ocm", ocm("R", "DETERMINED", lines)))
    assert code == 0 and "recorded entry 1" in out
    err = " ".join(err.split())  # rich wraps at the terminal width
    assert "DELTA_MASS -9.000 kg and the ledger's propellant" in err and "the two systems disagree" in err


def test_a_tai_message_is_recorded_in_utc(led, tmp_path):
    # IERS Bulletin C: TAI - UTC = 37 s since 2017-01-01.
    f = write(tmp_path, "tai.ocm", ocm("T", "PLANNED", PLAN, time_system="TAI"))
    assert cli("--ledger", led, "import", f)[0] == 0
    (row,) = log(led)
    assert row["at"] == "2026-12-02T09:59:23Z" and row["data"]["source"]["time_system"] == "TAI"


def test_opm_annex_example_imports_as_two_plans(led):
    # CCSDS 502.0-B-3 annex G figure G-2: two planned maneuvers, no device: --engine names the engine.
    code, out, _ = cli("--ledger", led, "import", os.path.join(DATA, "opm_g2.kvn"), "--engine", "lae", "--dry-run")
    assert code == 0 and out.count("would record: plan lae") == 2
    assert "2021-06-03T09:00:34.100000Z" in out and "DELTA_MASS -18.418 kg" in out


@pytest.mark.parametrize("xml", [False, True])
def test_export_reads_back_with_the_library_and_imports_as_nothing_new(led, tmp_path, xml):
    assert cli("--ledger", led, "import", write(tmp_path, "plan.ocm", ocm("P", "PLANNED", PLAN)))[0] == 0
    assert cli("--ledger", led, "import", write(tmp_path, "p2.ocm", ocm("P2", "PLANNED", PLAN, man_id="M009")))[0] == 0
    assert cli("--ledger", led, "import", write(tmp_path, "recon.ocm", ocm("R", "DETERMINED", RECON)))[0] == 0
    assert cli("--ledger", led, "import", write(tmp_path, "day.csv", firings_csv()))[0] == 0
    for argv in (["burn", "--engine", "lae", "--duration", "20 s", "--at", "2026-12-01T00:00Z"],
                 ["burn", "--engine", "rcs", "--propellant", "0.3 kg", "--at", "2026-12-01T01:00Z"],
                 ["plan", "--engine", "rcs", "--dv", "0.5 m/s", "--at", "2026-12-20T00:00Z"]):
        assert cli("--ledger", led, *argv)[0] == 0
    out_file = str(tmp_path / ("mass.xml" if xml else "mass.ocm"))
    code, out, _ = cli("--ledger", led, "export", "--format", "ocm", "--out", out_file, "--json", *(["--xml"] if xml else []))
    assert code == 0
    summary = json.loads(out)
    jsonschema.Draft202012Validator(schemas.EXPORT).validate(summary)
    assert (summary["executed"], summary["planned"]) == (3, 2)
    msg = ccsds_ndm.from_file(out_file)  # the library's own reader (ccsds-ndm-py 0.0.9)
    blocks = {(m.man_id, m.man_basis.upper()) for m in msg.segment.data.man}
    assert blocks == {("M001", "DETERMINED"), ("M009", "PLANNED"), ("PROPLEDGER-6", "DETERMINED"),
                      ("PROPLEDGER-7", "DETERMINED"), ("PROPLEDGER-8", "PLANNED")}
    if not xml:  # ccsds-ndm-py 0.0.9 reads <phys> from KVN only
        assert msg.segment.data.phys.wet_mass == pytest.approx(summary["wet_mass_kg"], rel=1e-12)
        assert msg.segment.data.phys.dry_mass == 800.0
    before = _state(led)
    code, out, _ = cli("--ledger", led, "import", out_file, "--json")
    doc = json.loads(out)
    jsonschema.Draft202012Validator(schemas.IMPORT).validate(doc)
    assert code == 0 and doc["recorded"] == doc["corrected"] == 0 and doc["unchanged"] == 5
    assert _state(led) == before


def test_export_never_writes_over_the_ledger(led, tmp_path):
    code, _, err = cli("--ledger", led, "export", "--out", led)
    assert code == 2 and "is the ledger" in err


def test_a_recounted_firings_file_corrects_its_group_and_leaves_the_others(led, tmp_path):
    assert cli("--ledger", led, "import", write(tmp_path, "day.csv", firings_csv()))[0] == 0
    recount = firings_csv().replace(",RCS-1B,100,2", ",RCS-1B,160,2")  # first row of the first pass
    code, out, _ = cli("--ledger", led, "import", write(tmp_path, "day-v2.csv", recount), "--json")
    doc = json.loads(out)
    assert (doc["recorded"], doc["corrected"], doc["unchanged"]) == (0, 1, 1)
    fix = next(r for r in log(led) if r["kind"] == "correct")
    ch = fix["changes"]  # the pass counted its pulses, so the correction gives the recounted pulse train
    assert ch["pulses"] * ch["on_time_s"] == pytest.approx(0.81)  # 0.75 s + 60 ms


@pytest.mark.parametrize("name, content", [
    ("empty.ocm", b""), ("noise.ocm", bytes(range(256)) * 2), ("cut.xml", b'<ocm version="3.0"><header>'),
    ("oem.kvn", b"CCSDS_OEM_VERS = 2.0\nCREATION_DATE = 2020-01-01T00:00:00\nORIGINATOR = X\n"),
    ("header.csv", b"utc,thr,on_ms\n"), ("short.csv", b"utc,thr,on_ms\n2026-12-02T00:00:00Z,RCS-1A\n"),
])
def test_junk_is_a_clear_error_never_an_internal_one(led, tmp_path, name, content):
    f = tmp_path / name
    f.write_bytes(content)
    before = _state(led)
    code, _, err = cli("--ledger", led, "import", str(f))
    assert code == 2 and err.startswith(f"propledger: error: {f}") and "internal error" not in err
    assert _state(led) == before


def test_a_ledger_made_before_the_import_section_takes_it_from_craft(tmp_path):
    old = tmp_path / "old.yaml"
    old.write_text(CRAFT.split("import:")[0])
    path = str(tmp_path / "old.ledger.json")
    assert cli("--ledger", path, "init", "--craft", str(old))[0] == 0
    msg = write(tmp_path, "plan.ocm", ocm("P", "PLANNED", PLAN))
    code, _, err = cli("--ledger", path, "import", msg)
    assert code == 2 and "unknown device 'THR-A' (devices in the craft file's import.devices: none" in err
    new = write(tmp_path, "new.yaml", CRAFT)
    assert cli("--ledger", path, "import", msg, "--craft", new)[0] == 0
    assert [r["kind"] for r in log(path)] == ["plan"]


def test_a_bad_import_section_is_refused_when_the_ledger_is_made(tmp_path):
    craft = write(tmp_path, "c.yaml", CRAFT.replace("THR-A: lae", "THR-A: main"))
    code, _, err = cli("--ledger", str(tmp_path / "x.json"), "init", "--craft", craft)
    assert code == 2 and "import.devices.THR-A: unknown engine 'main' (engines: lae, rcs)" in err
    assert not os.path.exists(tmp_path / "x.json")
