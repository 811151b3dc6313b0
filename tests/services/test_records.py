"""Stored records to entries: the batch conversion every read uses gives exactly the one-by-one answer."""
from __future__ import annotations

from datetime import datetime, timezone

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ledger.services.records import entries_from_records, entry_from_record, make_record
from ledger.services.timefmt import EARLIEST, LATEST, iso

# Times as the program stores them: whole microseconds within the accepted years.
MICROS = st.integers(min_value=int(EARLIEST * 1e6), max_value=int(LATEST * 1e6) - 1)


def _record(seq: int, at: float, logged: float) -> dict:
    rec = make_record("mass", at, logged, "ops", "", {"delta": -1.0})
    rec["seq"] = seq
    return rec


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(MICROS, MICROS), min_size=1, max_size=40))
def test_batch_equals_one_by_one(times):
    records = [_record(i + 1, a / 1e6, w / 1e6) for i, (a, w) in enumerate(times)]
    assert entries_from_records(records) == [entry_from_record(r) for r in records]


def test_times_match_the_standard_library_reading():
    # Reference: Python's datetime (ISO 8601 reading and POSIX timestamp), independent of numpy's parser.
    stamps = ["2026-03-01T12:00:00Z", "2026-03-01T12:00:00.000001Z", "1969-07-20T20:17:40Z"]
    records = [dict(_record(i + 1, 0.0, 0.0), at=s, recorded=s) for i, s in enumerate(stamps)]
    got = [e.at for e in entries_from_records(records)]
    want = [datetime.fromisoformat(s.replace("Z", "+00:00")).timestamp() for s in stamps]
    assert got == want
    assert iso(got[1]) == stamps[1]


def test_an_offset_time_is_read_one_by_one_with_the_same_answer():
    # An entry written with an explicit offset (not this program's 'Z' form) must still land at the same instant:
    # 14:00+02:00 is 12:00Z (ISO 8601 offsets).
    records = [dict(_record(1, 0.0, 0.0), at="2026-03-01T12:00:00Z", recorded="2026-03-01T12:00:00Z"),
               dict(_record(2, 0.0, 0.0), at="2026-03-01T14:00:00+02:00", recorded="2026-03-01T12:00:00Z")]
    a, b = entries_from_records(records)
    assert a.at == b.at == datetime(2026, 3, 1, 12, tzinfo=timezone.utc).timestamp()


def test_words_numpy_would_read_as_times_are_not_times():
    # numpy's datetime64 reads 'NaT', 'now' and 'today'; the standard library (and so this program) does not
    for word in ("NaTZ", "nowZ", "todayZ"):
        records = [dict(_record(1, 0.0, 0.0), at=word)]
        with pytest.raises(ValueError):
            entries_from_records(records)


@settings(max_examples=60, deadline=None)
@given(st.lists(MICROS, min_size=1, max_size=40), st.sampled_from([None, "+02:00", "\u00e9", "\x00", " "]),
       st.booleans())
def test_one_width_block_reads_as_the_standard_library(micros, odd, whole_seconds):
    # Times all of one width are parsed as one block of ASCII; the reference is Python's datetime (ISO 8601
    # reading, POSIX timestamp). One odd time (an offset, a non-ASCII or NUL character, a space) must be read
    # exactly as the standard library reads it, or refused as it refuses it.
    stamps = [iso((m // 1_000_000) if whole_seconds else m / 1e6) for m in micros]
    if odd is not None:
        stamps[len(stamps) // 2] = stamps[len(stamps) // 2][:-1] + odd if odd == "+02:00" else \
            stamps[len(stamps) // 2][:12] + odd + stamps[len(stamps) // 2][13:]
    records = [dict(_record(i + 1, 0.0, 0.0), at=s, recorded=stamps[0]) for i, s in enumerate(stamps)]
    try:
        want = [datetime.fromisoformat(s.replace("Z", "+00:00")).timestamp() for s in stamps]
    except ValueError:
        with pytest.raises(ValueError):
            entries_from_records(records)
        return
    assert [e.at for e in entries_from_records(records)] == want
