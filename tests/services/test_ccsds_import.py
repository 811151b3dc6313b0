"""Reading CCSDS 502.0-B-3 messages: the standard's own annex G examples, the library's writer and
reader, the delta-v magnitude against the message's components, and time-system conversion.

Sources named beside each check:
- CCSDS 502.0-B-3 (Orbit Data Messages), annex G figure G-2 (OPM with two maneuvers, typed in
  tests/data/ccsds/opm_g2.kvn) and figures G-17, G-18 (OCM maneuver blocks, tests/data/ccsds/README.md);
- ccsds-ndm-py 0.0.9 (its reader and writer, an independent implementation of the standard);
- numpy.linalg.norm for the vector magnitude; 1 km = 1000 m (SI Brochure, 9th ed., table 7 prefixes);
- IERS Bulletin C: TAI - UTC = 37 s since 2017-01-01; GPS time = TAI - 19 s (IS-GPS-200, 3.3.4), so
  UTC = GPS - 18 s over the same span.
"""
from __future__ import annotations

import math
import os
from datetime import datetime, timezone

import numpy as np
import pytest

import ccsds_ndm
from ledger.errors import InputError
from ledger.services.ccsds_import import candidates, read_message, utc_seconds

DATA = os.path.join(os.path.dirname(os.path.dirname(__file__)), "data", "ccsds")


def _read(name: str, **kw):
    path = os.path.join(DATA, name)
    with open(path, encoding="utf-8") as fh:
        text = fh.read()
    return path, text, read_message(path, text, **kw)


def _utc(text: str) -> float:
    return datetime.fromisoformat(text).replace(tzinfo=timezone.utc).timestamp()


def test_opm_annex_g2_values_as_the_standard_prints_them():
    # CCSDS 502.0-B-3 annex G figure G-2: EUTELSAT W4, two planned maneuvers.
    _, _, msg = _read("opm_g2.kvn")
    assert (msg.format, msg.version, msg.time_system, msg.object_name) == ("opm", "3.0", "UTC", "EUTELSAT W4")
    assert msg.message_key == "CREATION_DATE" and msg.message == "2021-06-03T05:33:00.000"
    assert msg.wet_mass_kg == 1913.0
    first, second = msg.manoeuvres
    assert first.at == _utc("2021-06-03T09:00:34.100")
    assert first.duration_s == 132.60 and first.delta_mass_kg == -18.418
    assert first.dv_km_s == (-0.02325700, 0.01683160, -0.00893444)
    assert second.at == _utc("2021-06-05T18:59:21") and second.duration_s == 0.0
    assert second.delta_mass_kg == -1.469 and second.dv_km_s == (0.00101500, -0.00187300, 0.0)


def test_dv_magnitude_and_km_s_to_m_s_from_the_message_components():
    # |DV| against numpy.linalg.norm of the components as the library's own reader returns them
    # (ccsds-ndm-py 0.0.9), times 1000 m/km (SI prefix kilo).
    _, text, msg = _read("opm_g2.kvn")
    lib = ccsds_ndm.from_str(text).segment.data.maneuver_parameters
    for ours, theirs in zip(msg.manoeuvres, lib):
        comps = np.array([theirs.man_dv_1, theirs.man_dv_2, theirs.man_dv_3])
        assert ours.dv_m_s == pytest.approx(float(np.linalg.norm(comps)) * 1000.0, rel=1e-12)
    # AMF-3 in figure G-2: |(-0.023257, 0.0168316, -0.00893444)| km/s is 30.07 m/s (hand: sqrt of the squares)
    assert msg.manoeuvres[0].dv_m_s == pytest.approx(30.0668, abs=1e-4)


def test_ocm_annex_g17_reads_both_blocks_and_leaves_the_deployment_out():
    # CCSDS 502.0-B-3 annex G figure G-17: a deployment block and a 100 s thrust block, both CANDIDATE.
    path, _, msg = _read("ocm_g17.kvn")
    assert msg.wet_mass_kg == 200.0
    deploy, thrust = msg.manoeuvres
    assert (deploy.man_id, deploy.basis, deploy.device) == ("E_W_20160305B", "CANDIDATE", "DEPLOY")
    assert deploy.elements[:4] == ("DEPLOY_ID", "DEPLOY_DV_X", "DEPLOY_DV_Y", "DEPLOY_DV_Z")  # wrapped line joined
    assert deploy.at == _utc("2022-12-18T14:28:15.1172") + 500.0  # TIME_RELATIVE to EPOCH_TZERO
    assert (thrust.device, thrust.purpose, thrust.duration_s) == ("THR_01", "ORBIT", 100.0)
    assert thrust.at == _utc("2022-12-18T14:36:35.1172")
    # A plan needs a delta-v: the thrust-only candidate block is refused by name, the deployment is skipped.
    with pytest.raises(InputError, match=r"ocm_g17.kvn line \d+: MAN_ID E_W_20160305B: a plan needs DV_X"):
        candidates(path, "0" * 64, msg, {"devices": {"THR_01": "rcs"}}, ["lae", "rcs"])
    cands, warnings = candidates(path, "0" * 64, type(msg)(**{**msg.__dict__, "manoeuvres": [deploy]}), {}, ["rcs"])
    assert cands == [] and "deployment block" in warnings[0]


def test_ocm_annex_g18_two_lines_add_up_to_the_200_s_the_standard_states():
    # CCSDS 502.0-B-3 annex G figure G-18: COMMENT '200 s (in aggregate) of 10N thrust'; lines at
    # TIME_RELATIVE 500 and 600 s after EPOCH_TZERO, 100 s each.
    _, _, msg = _read("ocm_g18.kvn")
    (man,) = msg.manoeuvres
    assert man.duration_s == 200.0
    assert man.at == _utc("2022-12-18T14:28:15.1172") + 500.0
    assert msg.object_name == "OSPREY 5" and msg.wet_mass_kg == 100.0


def _ocm(basis="PLANNED", lines=(("2026-12-18T14:36:35.1172", ["100.0", "-1.5", "0.0", "0.0012", "0.0005", "2.0"]),),
         composition="TIME_ABSOLUTE, MAN_DURA, DELTA_MASS, DV_X, DV_Y, DV_Z, DV_MAG_SIGMA", time_system="UTC"):
    """An OCM built with ccsds-ndm-py's own object model and writer (the library, not our text)."""
    header = ccsds_ndm.OdmHeader(creation_date="2026-11-06T09:23:57", originator="FDS", message_id="PLAN-0001")
    meta = ccsds_ndm.OcmMetadata(epoch_tzero="2026-12-18T00:00:00", time_system=time_system, object_name="SAT1")
    data = ccsds_ndm.OcmData()
    data.man = [ccsds_ndm.OcmManeuverParameters(
        man_id="M001", man_device_id="THR-A", man_composition=composition, man_ref_frame="RSW_ROTATING",
        man_basis=basis, man_lines=[ccsds_ndm.ManLine(epoch=e, values=v) for e, v in lines])]
    data.phys = ccsds_ndm.OcmPhysicalDescription(wet_mass=1200.0, dry_mass=800.0)
    return ccsds_ndm.Ocm(header, ccsds_ndm.OcmSegment(meta, data))


@pytest.mark.parametrize("encoding", ["kvn", "xml"])
def test_round_trip_through_the_library_writer_and_our_reader(tmp_path, encoding):
    # Written by ccsds-ndm-py 0.0.9's to_str (KVN and XML), read back here: every value as put in.
    text = _ocm().to_str(encoding)
    path = str(tmp_path / f"m.{encoding}")
    msg = read_message(path, text)
    assert (msg.encoding, msg.message_key, msg.message) == (encoding, "MESSAGE_ID", "PLAN-0001")
    assert (msg.wet_mass_kg, msg.dry_mass_kg) == (1200.0, 800.0)
    (m,) = msg.manoeuvres
    assert (m.man_id, m.basis, m.device) == ("M001", "PLANNED", "THR-A")
    assert m.dv_km_s == (0.0, 0.0012, 0.0005) and m.duration_s == 100.0 and m.delta_mass_kg == -1.5
    assert m.dv_m_s == pytest.approx(math.hypot(1.2, 0.5), rel=1e-12)  # 1.3 m/s: the 5-12-13 triangle
    assert m.sigma_m_s == pytest.approx(0.02 * 1.3, rel=1e-12)  # DV_MAG_SIGMA 2 % of |DV|


def test_a_block_of_several_lines_is_one_composite_manoeuvre():
    # CCSDS 502.0-B-3 table 6-7 (MAN_ID): constituents of one MAN_ID and basis are added together.
    text = _ocm(basis="DETERMINED", composition="TIME_ABSOLUTE, DV_X, DV_Y, DV_Z",
                lines=(("2026-12-18T14:00:00", ["0.001", "0", "0"]), ("2026-12-18T14:10:00", ["0", "0.001", "0"]))).to_str("kvn")
    (m,) = read_message("x.ocm", text).manoeuvres
    assert m.dv_km_s == (0.001, 0.001, 0.0)
    assert m.dv_m_s == pytest.approx(math.sqrt(2.0), rel=1e-12) and m.at == _utc("2026-12-18T14:00:00")


def test_tai_tt_and_gps_epochs_become_utc():
    # IERS Bulletin C: TAI - UTC = 37 s from 2017-01-01; GPS = TAI - 19 s (IS-GPS-200) so UTC = GPS - 18 s;
    # TT = TAI + 32.184 s (IAU 1991 resolution A4).
    assert utc_seconds("2021-06-03T09:00:34.1", "TAI", "x") == pytest.approx(_utc("2021-06-03T08:59:57.1"), abs=1e-6)
    assert utc_seconds("2021-06-03T09:00:34.1", "GPS", "x") == pytest.approx(_utc("2021-06-03T09:00:16.1"), abs=1e-6)
    assert utc_seconds("2021-06-03T09:00:34.1", "TT", "x") == pytest.approx(_utc("2021-06-03T08:59:24.916"), abs=1e-6)
    assert utc_seconds("2021-154T09:00:34.1", "UTC", "x") == _utc("2021-06-03T09:00:34.1")  # day of year 154


@pytest.mark.parametrize("change, match", [
    (dict(time_system="TDB"), r"line \d+: TIME_SYSTEM = TDB: expected UTC, or TAI, TT or GPS"),
    (dict(lines=(("2026-12-18T14:36:35", ["100.0", "1.5", "0", "0.0012", "0.0005", "2.0"]),)),
     r"line \d+: MAN_ID M001: DELTA_MASS = 1.5 kg is positive; expected a negative"),
    (dict(composition="TIME_ABSOLUTE, DV_X, DV_Y", lines=(("2026-12-18T14:36:35", ["0.001", "0"]),)),
     r"MAN_ID M001: MAN_COMPOSITION has only part of DV_X, DV_Y, DV_Z"),
])
def test_bad_messages_are_one_line_errors_naming_file_line_and_keyword(change, match):
    text = _ocm(**change).to_str("kvn")
    with pytest.raises(InputError, match=match) as info:
        read_message("plan.ocm", text)
    assert str(info.value).startswith("plan.ocm") and "\n" not in str(info.value)


def test_dv_in_another_unit_and_an_unknown_version_are_refused_with_what_was_expected():
    text = _ocm().to_str("kvn")
    with_units = text.replace("MAN_COMPOSITION", "MAN_UNITS            = [s, kg, m/s, m/s, m/s, %]\nMAN_COMPOSITION")
    with pytest.raises(InputError, match=r"plan.ocm line \d+: MAN_UNITS: 'm/s' for DV_X; expected km/s"):
        read_message("plan.ocm", with_units)
    with pytest.raises(InputError, match=r"plan.ocm line 1: .*'version': '9.0' \(expected one of: 3.0\)"):
        read_message("plan.ocm", text.replace("CCSDS_OCM_VERS       = 3.0", "CCSDS_OCM_VERS = 9.0"))
    _, opm, _ = _read("opm_g2.kvn")
    with pytest.raises(InputError, match=r"line \d+: .*'m/s'.*expected one of: \"km/s\""):
        read_message("g2.opm", opm.replace("-0.02325700    [km/s]", "-23.257 [m/s]"))
    with pytest.raises(InputError, match=r"g2.opm line 46: MAN_DELTA_MASS = 18.418 kg is positive"):
        read_message("g2.opm", opm.replace("-18.418", "18.418"))
    with pytest.raises(InputError, match=r"g2.opm: .*Missing required field: MAN_DV_3"):
        read_message("g2.opm", opm.replace("MAN_DV_3          =      0.00000000    [km/s]\n", ""))


def test_unknown_device_names_the_device_and_the_engines():
    msg = read_message("plan.ocm", _ocm().to_str("kvn"))
    with pytest.raises(InputError, match=r"plan.ocm line \d+: MAN_ID M001: unknown device 'THR-A' "
                                         r"\(devices in the craft file's import.devices: THR-B; engines: lae, rcs\)"):
        candidates("plan.ocm", "0" * 64, msg, {"devices": {"THR-B": "lae"}}, ["lae", "rcs"])
