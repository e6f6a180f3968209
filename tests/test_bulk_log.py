"""The season-scale log path (issue 19): the vectorised parse gives exactly what the row parser
gives (every good row, every bad row named FILE:LINE with the same reason), and the bulk store
insert keeps the same duplicate and conflict rules as Store.add_readings."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from frostwatch.ingest.bulk import concat, parse_log_columns
from frostwatch.ingest.csvlog import parse_sensor_log_bytes
from frostwatch.models import Reading
from frostwatch.store import Store, to_ms
from frostwatch.store.bulk import add_reading_columns, series_of_columns

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sensor_logs"
KNOWN = {"east-low", "east-tower", "river-low", "river-low-b", "hill-low", "shed-sky"}
HEADER = "time,station,quantity,value,unit"


def _same(data: bytes, known=KNOWN) -> tuple[int, int]:
    lines: list[int] = []
    want, want_rej = parse_sensor_log_bytes(data, "log.csv", known, lines)
    cols, got_rej = parse_log_columns(data, "log.csv", known)
    got = cols.readings()
    # times as the store keeps them: whole milliseconds
    assert [(to_ms(r.time_utc), r.station, r.quantity, r.value) for r in got] == \
           [(to_ms(r.time_utc), r.station, r.quantity, r.value) for r in want]
    assert cols.line.tolist() == lines
    assert [(r.source, r.line, r.reason, r.raw) for r in got_rej] == [(r.source, r.line, r.reason, r.raw) for r in want_rej]
    return len(want), len(want_rej)


@pytest.mark.parametrize("name", sorted(p.name for p in SAMPLES.glob("*.csv")))
def test_the_bundled_logs_read_the_same_both_ways(name):
    n, bad = _same((SAMPLES / name).read_bytes())
    assert n > 0
    if name == "broken-rows.csv":
        assert bad >= 10


NASTY = [
    "2027-04-14T20:00:00-07:00,east-low,air_temperature,7.41,degC",
    "2027-04-14T20:00:00.250-07:00,east-low,air_temperature,7.5,degC",  # milliseconds
    "2027-04-14T20:00:00.25-07:00,east-low,air_temperature,7.5,degC",  # two decimals: the row parser's
    "2027-04-14T20:00:00.123456+00:00,east-low,air_temperature,7.5,degC",
    "2027-04-15T03:00:00Z,east-low,air_temperature,7.6,degC",
    "2027-04-14 20:00:00-07:00,east-low,air_temperature,7.7,degC",  # a space, not T
    " 2027-04-14T20:01:00-07:00 , east-low , air_temperature , 7.8 , degC ",  # padded fields
    "2027-04-14T20:01:00-0700,east-low,air_temperature,7.8,degC",
    "2027-04-14T20:01:00+24:00,east-low,air_temperature,7.8,degC",
    "2027-04-14T24:00:00-07:00,east-low,air_temperature,7.8,degC",
    "2027-04-14T20:01:60-07:00,east-low,air_temperature,7.8,degC",
    "0001-01-01T00:00:00+14:00,east-low,air_temperature,7.8,degC",
    "2300-01-01T00:00:00+00:00,east-low,air_temperature,7.8,degC",  # beyond pandas' nanosecond range
    "1962-01-01T01:00:00-05:00,east-low,air_temperature,7.8,degC",  # before 1970 (typical-year files)
    "1969-12-31T23:59:59.999Z,east-low,air_temperature,7.8,degC",
    "1969-12-31T16:59:59.001-07:00,east-low,air_temperature,7.8,degC",
    "1900-01-01T00:00:00+14:00,east-low,air_temperature,7.8,degC",  # 1899 in UTC
    "1899-12-31T23:59:59Z,east-low,air_temperature,7.8,degC",  # the row parser's
    "2027-02-29T20:00:00-07:00,east-low,air_temperature,7.8,degC",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,1_0,degC",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,1e400,degC",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,-0,degC",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,0x10,degC",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,45.68,degF",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,280.1,K",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,7.8, DEGC ",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,7.8,mph",
    "2027-04-14T20:02:00-07:00,east-low,relative_humidity,0.82,",
    "2027-04-14T20:02:00-07:00,east-low,relative_humidity,0.82,1",
    "2027-04-14T20:02:00-07:00,east-low,relative_humidity,1.0,%",
    "2027-04-14T20:02:00-07:00,east-low,relative_humidity,0,%",
    "2027-04-14T20:02:00-07:00,east-low,cloud_area_fraction,4,okta",
    "2027-04-14T20:02:00-07:00,east-low,wind_machine_running,1.0,1",
    "2027-04-14T20:02:00-07:00,east-low,wind_machine_running,2,1",
    "2027-04-14T20:02:00-07:00,east-low,wind_speed,10,knots",
    "2027-04-14T20:02:00-07:00,east-low,air_pressure,101.3,kPa",
    "2027-04-14T20:02:00-07:00,EAST-LOW,air_temperature,7.8,degC",
    "2027-04-14T20:02:00-07:00,,air_temperature,7.8,degC",
    "2027-04-14T20:02:00-07:00,east-low,,7.8,degC",
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,7.8",  # no unit field
    "2027-04-14T20:02:00-07:00,east-low,air_temperature",  # too short
    "2027-04-14T20:02:00-07:00,east-low,air_temperature,7.8,degC,extra",  # one field too many
    ",,,,",
    "",
    "   ",
    "2027-04-14T20:03:00-07:00,east-low,air_temperature,7.9,degC",
]


def test_every_kind_of_row_reads_the_same_both_ways():
    data = (HEADER + "\n" + "\n".join(NASTY) + "\n").encode()
    n, bad = _same(data)
    assert n >= 15 and bad >= 15


@pytest.mark.parametrize("variant", ["crlf", "bom", "no final newline", "quotes", "lone cr", "bad utf-8", "nul",
                                     "upper header", "reordered columns", "unknown stations allowed"])
def test_file_level_variants_read_the_same_both_ways(variant):
    rows = list(NASTY)
    header = HEADER
    end = "\n"
    tail = "\n"
    known = KNOWN
    if variant == "crlf":
        end = tail = "\r\n"
    elif variant == "no final newline":
        tail = ""
    elif variant == "quotes":
        rows.insert(3, '"2027-04-14T20:00:00-07:00","east-low","air_temperature","7.4","degC"')
    elif variant == "lone cr":
        rows.insert(3, "2027-04-14T20:00:00-07:00,east-low,air_temperature,7.4,degC\r" + rows[3])
    elif variant == "upper header":
        header = " Time , STATION,quantity,Value,unit"
    elif variant == "reordered columns":
        header = "station,time,quantity,value,unit"
        rows = [",".join([r.split(",")[1], r.split(",")[0], *r.split(",")[2:]]) if r.count(",") >= 1 else r for r in rows]
    elif variant == "unknown stations allowed":
        known = None
    data = (header + end + end.join(rows) + tail).encode()
    if variant == "bom":
        data = b"\xef\xbb\xbf" + data
    elif variant == "bad utf-8":
        data = data.replace(b"east-tower", b"east-\xff") + (HEADER.split(",")[0] + "\n").encode()
        data = data.replace(b"7.9,degC", b"7.9,deg\xffC")
    elif variant == "nul":
        data = data.replace(b"7.9,degC", b"7.9\x00,degC")
    _same(data, known)


_times = st.sampled_from(["2027-04-14T20:00:00-07:00", "2027-04-14T20:00:01Z", "2027-04-14T20:00:00.5+00:00",
                          "2027-04-14T20:00:00", "2027-13-14T20:00:00Z", "x", "", " 2027-04-14T21:00:00+01:00",
                          "1962-01-01T01:00:00-05:00", "1969-12-31T23:59:59.999Z", "1899-12-31T23:00:00Z"])
_stations = st.sampled_from(["east-low", "river-low", " hill-low", "nowhere", "", "EAST-LOW"])
_quantities = st.sampled_from(["air_temperature", "relative_humidity", "wind_speed", "sprinkler_running",
                               "cloud_area_fraction", "air_temprature", ""])
_values = st.one_of(st.floats(allow_nan=True, allow_infinity=True).map(repr),
                    st.sampled_from(["7", "-3.25", "1_5", "", "nan", " 4 ", "1e5", "0.5", "101", "seven"]))
_units = st.sampled_from(["", "degC", "degF", "%", "1", "m/s", "knots", "okta", "furlongs", " K "])
_row = st.one_of(
    st.tuples(_times, _stations, _quantities, _values, _units).map(",".join),
    st.tuples(_times, _stations, _quantities, _values).map(",".join),
    st.text(alphabet=",abc1-: \t", max_size=12),
)


@given(st.lists(_row, max_size=40))
def test_random_rows_read_the_same_both_ways(rows):
    _same((HEADER + "\n" + "\n".join(rows) + "\n").encode())


def _strict_times_both_ways(texts: list[str]) -> int:
    import re

    from frostwatch.ingest.bulk import _STRICT_TIME, _strict_time_mask

    got = _strict_time_mask(np.array(texts, dtype=object))
    want = [re.fullmatch(_STRICT_TIME, t) is not None for t in texts]
    assert got.tolist() == want, [t for t, a, b in zip(texts, got, want, strict=True) if a != b]
    return sum(want)


def test_the_strict_time_check_on_arrays_is_the_regular_expressions():
    """Each valid form with every character replaced, in turn, by digits, signs, separators,
    other scripts' digits and nothing, and cut or lengthened at every place."""
    forms = ["2027-04-14T20:00:00Z", "2027-04-14T20:00:00-07:00", "1962-01-01T01:00:00.123+05:30",
             "2199-12-31T23:59:59.999Z", "1900-01-01T00:00:00+23:59"]
    texts = list(forms)
    for form in forms:
        for i in range(len(form) + 1):
            texts += [form[:i], form[:i] + "0" + form[i:], form[:i] + " "]
            for ch in "0123456789+-:.TZz ٣x\u00b2":
                texts.append(form[:i] + ch + form[i + 1:])
    assert _strict_times_both_ways(texts) > 50
    assert _strict_times_both_ways(["", "Z", "2027-04-14T20:00:00"]) == 0


@given(st.lists(st.text(alphabet="0123456789-+:.TZ ٣", min_size=18, max_size=31), max_size=30))
def test_random_texts_are_strict_times_as_the_regular_expression_says(texts):
    _strict_times_both_ways(texts)


# ---- the bulk insert ---------------------------------------------------------------------------

def _log(rows: list[tuple[str, str, str, float]]) -> bytes:
    return (HEADER + "\n" + "\n".join(f"{t},{s},{q},{v},degC" for t, s, q, v in rows) + "\n").encode()


def test_bulk_insert_keeps_the_duplicate_and_conflict_rules_of_add_readings(tmp_path):
    first = [("2027-04-14T20:00:00-07:00", "east-low", "air_temperature", 7.0),
             ("2027-04-14T20:01:00-07:00", "east-low", "air_temperature", 7.1)]
    second = [("2027-04-14T20:01:00-07:00", "east-low", "air_temperature", 7.1),  # stored before: duplicate
              ("2027-04-14T20:00:00-07:00", "east-low", "air_temperature", 6.0),  # stored before: conflict
              ("2027-04-14T20:02:00-07:00", "east-low", "air_temperature", 7.2),
              ("2027-04-14T20:02:00-07:00", "east-low", "air_temperature", 7.2),  # in-file duplicate
              ("2027-04-14T20:03:00-07:00", "river-low", "air_temperature", 5.0),
              ("2027-04-14T20:03:00-07:00", "river-low", "air_temperature", 5.5)]  # in-file conflict
    results = {}
    for way in ("rows", "bulk"):
        with Store.open(tmp_path / f"{way}.db") as store:
            lines: list[int] = []
            r0, _ = parse_sensor_log_bytes(_log(first), "a.csv", KNOWN, lines)
            store.add_readings(r0, "a.csv", [("a.csv", n) for n in lines])
            if way == "rows":
                lines = []
                r1, _ = parse_sensor_log_bytes(_log(second), "b.csv", KNOWN, lines)
                stored, dup, conflicts = store.add_readings(r1, "b.csv", [("b.csv", n) for n in lines])
            else:
                cols, _ = parse_log_columns(_log(second), "b.csv", KNOWN)
                done = add_reading_columns(store, cols, "b.csv")
                stored, dup, conflicts = done.stored, done.duplicates, done.conflicts
                assert done.store_had_readings
            rows = store.conn.execute("SELECT time_utc_ms, station, quantity, value, source FROM readings "
                                      "ORDER BY 1, 2, 3").fetchall()
            results[way] = (stored, dup, [(c.source, c.line, c.reason, c.raw) for c in conflicts], rows)
    assert results["bulk"] == results["rows"]
    stored, dup, conflicts, _ = results["bulk"]
    assert (stored, dup, len(conflicts)) == (2, 2, 2)
    assert [c[1] for c in conflicts] == [3, 7]  # named by the line of the second file


def test_series_of_a_fresh_store_equals_the_store_read(tmp_path):
    data = (SAMPLES / "2027-04-14-radiation-frost.csv").read_bytes()
    cols, _ = parse_log_columns(data, "frost.csv", KNOWN)
    n = len(cols)
    both = concat([cols, parse_log_columns(data, "again.csv", KNOWN)[0]])  # every row twice (concat empties the parts)
    with Store.open(tmp_path / "s.db") as store:
        done = add_reading_columns(store, both, "frost.csv")
        assert not done.store_had_readings and done.stored == n and done.duplicates == n
        got = series_of_columns(both, done.kept)
        lo, hi = int(both.time_ms.min()), int(both.time_ms.max())
        from frostwatch.store import from_ms

        want = store.readings_window(from_ms(lo), from_ms(hi))
    assert list(got) == list(want)
    for k in want:
        assert np.array_equal(got[k][0], want[k][0]) and np.array_equal(got[k][1], want[k][1])


def test_readings_of_columns_are_aware_utc():
    cols, _ = parse_log_columns(_log([("2027-04-14T20:00:00-07:00", "east-low", "air_temperature", 7.0)]), "a", KNOWN)
    (r,) = cols.readings()
    assert r == Reading(dt.datetime(2027, 4, 15, 3, 0, tzinfo=dt.UTC), "east-low", "air_temperature", 7.0)
