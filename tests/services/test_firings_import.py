"""Firings from a telemetry CSV: columns and units from the craft file, rows summed per engine and per
pass, orbit or row. Sources: SI prefix milli = 1e-3 (SI Brochure, 9th ed.) for on-times in ms, read once
through pint 0.24+ for a cell that carries its own unit; sums worked out by hand (stated beside each)."""
from __future__ import annotations

import pytest

from ledger.errors import InputError
from ledger.services.firings_import import candidates, group, read_firings

CONF = {"devices": {"A": "rcs", "B": "rcs", "M": "lae"},
        "firings": {"columns": {"time": "utc", "thruster": "thr", "on_time": "on", "pulses": "n"},
                    "on_time_unit_s": 1e-3, "pass_gap_s": 1200.0, "orbit_period_s": 3600.0}}
ENGINES = ["lae", "rcs"]
CSV = """utc,thr,on,n
2026-12-02T00:00:00Z,A,100,2
2026-12-02T00:05:00Z,B,200,3
2026-12-02T00:06:00Z,M,35 ms,1
2026-12-02T00:50:00Z,A,300,4
2026-12-02T01:20:00Z,A,400,
"""


def _firings(text=CSV, conf=CONF):
    return read_firings("day.csv", text, conf, ENGINES)


def test_rows_read_in_si_with_the_configured_columns_and_units():
    fs = _firings()
    assert [f.line for f in fs] == [2, 3, 4, 5, 6]
    assert [f.on_time_s for f in fs] == pytest.approx([0.1, 0.2, 0.035, 0.3, 0.4])  # ms x 1e-3; '35 ms' by pint
    assert [f.engine for f in fs] == ["rcs", "rcs", "lae", "rcs", "rcs"]
    assert [f.pulses for f in fs] == [2, 3, 1, 4, None]


def test_pass_orbit_and_none_grouping():
    fs = _firings()
    # pass: quiet gaps > 20 min start a new pass: 00:00-00:06 | 00:50 | 01:20 (30 min after 00:50)
    passes = group(fs, "pass", CONF, "day.csv")
    assert [(e, len(g)) for e, _, g in passes] == [("rcs", 2), ("lae", 1), ("rcs", 1), ("rcs", 1)]
    # orbit: 60 min from the first row: 00:00-00:59 (rows 2, 3, 5 on rcs; 4 on lae) | 01:00-01:59 (row 6)
    orbits = group(fs, "orbit", CONF, "day.csv")
    assert [(e, [f.line for f in g]) for e, _, g in orbits] == [("rcs", [2, 3, 5]), ("lae", [4]), ("rcs", [6])]
    assert len(group(fs, "none", CONF, "day.csv")) == 5
    cands = candidates("day.csv", "0" * 64, fs, "orbit", CONF)
    # every row of the group counts its pulses: a pulse train of 9 pulses, 0.6 s in all (0.1 + 0.2 + 0.3 s)
    assert cands[0].data == {"engine": "rcs", "duration": pytest.approx(0.6), "pulses": 9,
                             "on_time": pytest.approx(0.6 / 9)}
    assert cands[2].data == {"engine": "rcs", "duration": pytest.approx(cands[2].data["duration"])}  # no count
    assert cands[0].source["pulses"] == 9 and cands[0].source["rows"] == "2-5" and cands[0].source["row_count"] == 3
    assert "pulses" not in cands[2].source  # row 6 gives no count


def test_orbit_grouping_needs_the_period():
    conf = {**CONF, "firings": {**CONF["firings"], "orbit_period_s": None}}
    with pytest.raises(InputError, match="--group orbit needs import.firings.orbit_period"):
        group(_firings(), "orbit", conf, "day.csv")


@pytest.mark.parametrize("text, match", [
    (CSV.replace("utc,thr,on,n", "utc,thr,n"), r"day.csv line 1: no column 'on' \(the on-time column"),
    (CSV.replace(",A,300,", ",A,-3,"), r"day.csv line 5: on: on-time '-3'; expected a time of zero or more"),
    (CSV.replace(",A,300,", ",A,3 kg,"), r"day.csv line 5: on:"),
    (CSV.replace(",A,300,4", ",A,300,x"), r"day.csv line 5: n = 'x'; expected a whole number"),
    (CSV.replace("2026-12-02T00:50:00Z", "yesterday"), r"day.csv line 5: utc: expected an ISO 8601 time"),
    ("utc,thr,on,n\n", r"day.csv: no firings after the header"),
])
def test_bad_rows_name_file_line_and_column(text, match):
    with pytest.raises(InputError, match=match):
        _firings(text)
