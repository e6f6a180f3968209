"""Sensor-log ingest: every bad row gets its reason and line, every good row is kept."""

import datetime as dt
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from frostwatch.errors import IngestError
from frostwatch.ingest.csvlog import parse_sensor_log_bytes, read_sensor_log
from frostwatch.ingest.parse import parse_mqtt_message
from frostwatch.models import Reading, Rejection
from frostwatch.store import Store

REPO = Path(__file__).resolve().parent.parent
SAMPLES = REPO / "sample_sensor_logs"
STATIONS = {"east-low", "east-tower", "river-low", "river-low-b", "hill-low", "shed-sky"}
HEADER = b"time,station,quantity,value,unit\n"


def one(row: bytes):
    readings, rejections = parse_sensor_log_bytes(HEADER + row + b"\n", "t.csv", STATIONS)
    return readings, rejections


@pytest.mark.parametrize(
    ("row", "reason"),
    [
        (b"2027-04-14T21:00:00,east-low,air_temperature,3.4,degC", "no UTC offset"),
        (b"yesterday,east-low,air_temperature,3.4,degC", "not ISO 8601"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,3.4,furlongs", "furlongs"),
        (b"2027-04-14T21:00:00-07:00,west-low,air_temperature,3.4,degC", "unknown station 'west-low'"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temprature,3.4,degC", "unknown quantity 'air_temprature'"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,seven,degC", "not a number"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,,degC", "empty value"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,NaN,degC", "not a finite number"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,inf,degC", "not a finite number"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,85,degC", "out of the plausible range -60..60"),
        (b"2027-04-14T21:00:00-07:00,east-low,relative_humidity,0.82,%", "looks like a fraction"),
        (b"2027-04-14T21:00:00-07:00,east-low,relative_humidity,130,%", "out of the plausible range 0..100"),
        (b"2027-04-14T21:00:00-07:00,east-low,wind_speed,-0.4,m s-1", "out of the plausible range"),
        (b"2027-04-14T21:00:00-07:00,east-low", "columns"),
        (b"2027-04-14T21:00:00-07:00,east-low,sprinkler_running,0.5,1", "not 0 or 1"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,3.4\xff,degC", "not valid UTF-8"),
    ],
)
def test_each_kind_of_bad_row_gets_its_reason_and_line(row, reason):
    readings, rejections = one(row)
    assert readings == []
    assert len(rejections) == 1
    assert reason in rejections[0].reason
    assert rejections[0].where() == "t.csv:2"


def test_units_are_converted_once_at_ingest():
    readings, rejections = one(b"2027-04-15T21:00:00-07:00,hill-low,air_temperature,28.4,degF")
    assert not rejections
    assert readings[0].value == pytest.approx(-2.0, abs=1e-9)
    assert readings[0].time_utc == dt.datetime(2027, 4, 16, 4, 0, tzinfo=dt.UTC)


def test_empty_unit_means_canonical_and_z_time_is_utc():
    readings, _ = one(b"2027-04-15T04:00:00Z,east-low,air_temperature,-1.5,")
    assert readings[0].value == -1.5 and readings[0].time_utc.hour == 4


def test_header_missing_a_column_is_an_error_naming_the_file():
    with pytest.raises(IngestError, match=r"t.csv:1: .*lacks value"):
        parse_sensor_log_bytes(b"time,station,quantity\n", "t.csv", STATIONS)


@pytest.mark.parametrize("sep, word", [(";", "semicolons"), ("\t", "tabs")])
def test_a_spreadsheet_export_with_semicolons_or_tabs_is_named_with_the_fix(tmp_path, sep, word):
    """A spreadsheet in a locale with a decimal comma saves "CSV" with semicolons: both parsers
    (the row parser and the bulk one `replay` and `backtest` use) say so and how to save it."""
    from frostwatch.ingest.bulk import read_log_columns

    body = sep.join(["time", "station", "quantity", "value", "unit"]) + "\n"
    body += sep.join(["2027-04-15T04:00:00Z", "east-low", "air_temperature", "-1,5", "degC"]) + "\n"
    (tmp_path / "x.csv").write_text(body, encoding="utf-8")
    for parse in (lambda: parse_sensor_log_bytes(body.encode(), "x.csv", STATIONS),
                  lambda: read_log_columns(tmp_path / "x.csv", STATIONS)):
        with pytest.raises(IngestError, match=rf"x.csv:1: .*lacks .*separated by {word}.*comma-separated.*2.5 not 2,5"):
            parse()


def test_unreadable_file_is_an_error_naming_it(tmp_path):
    with pytest.raises(IngestError, match="no-such.csv"):
        read_sensor_log(tmp_path / "no-such.csv", STATIONS)


def test_broken_rows_sample_gives_the_documented_counts(tmp_path):
    """sample_sensor_logs/README.md: 15 readings stored, 15 rows rejected (one of them a
    conflicting duplicate found at storage), 1 exact duplicate ignored."""
    readings, rejections = read_sensor_log(SAMPLES / "broken-rows.csv", STATIONS)
    lines = sorted(r.line for r in rejections)
    assert lines == [7, 9, 11, 12, 13, 15, 16, 17, 18, 19, 21, 22, 23, 24]
    with Store.open(tmp_path / "fw.db") as store:
        stored, dups, conflicts = store.add_readings(readings, "broken-rows.csv")
        assert (stored, dups, len(conflicts)) == (15, 1, 1)
        assert "already stored" in conflicts[0].reason
        store.add_rejections(rejections + conflicts, dt.datetime(2027, 4, 15, tzinfo=dt.UTC))
        assert store.count("readings") == 15
        assert store.count("rejections") == 15


@pytest.mark.parametrize(
    ("name", "rows"),
    [
        ("2027-04-14-radiation-frost.csv", 4752),
        ("2027-04-15-windy-advective.csv", 4896),
        ("2027-04-16-cloudy-safe.csv", 4752),
    ],
)
def test_sample_nights_read_without_rejections(name, rows):
    readings, rejections = read_sensor_log(SAMPLES / name, STATIONS)
    assert rejections == []
    assert len(readings) == rows


@settings(max_examples=300, deadline=None)
@given(st.binary(max_size=300))
def test_any_bytes_give_readings_or_rejections_never_a_crash(data):
    try:
        readings, rejections = parse_sensor_log_bytes(HEADER + data, "fuzz.csv", STATIONS)
    except IngestError:
        return
    assert all(isinstance(r, Reading) for r in readings)
    assert all(isinstance(r, Rejection) and r.line is not None for r in rejections)


@settings(max_examples=300, deadline=None)
@given(st.text(max_size=40), st.binary(max_size=200))
def test_any_mqtt_message_gives_readings_or_rejections(topic, payload):
    now = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)
    out = parse_mqtt_message(topic, payload, "frostwatch", now, STATIONS)
    assert out and all(isinstance(r, (Reading, Rejection)) for r in out)


@pytest.mark.parametrize(
    ("payload", "reason"),
    [
        (b"NaN", "not a finite number"),
        (b"Infinity", "not a finite number"),
        (b"1e999", "not a finite number"),
        (b'{"value": true}', "not a number"),
        (b"[" * 50 + b"]" * 50, "nests deeper"),
        (b"\xff\xfe", "not valid UTF-8"),
        (b'{"time": "2027-04-15T12:00:00Z", "value": 3}', "ahead of the receipt time"),
    ],
)
def test_poison_mqtt_payloads_are_rejected_with_reasons(payload, reason):
    now = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)
    out = parse_mqtt_message("frostwatch/east-low/air_temperature", payload, "frostwatch", now, STATIONS)
    assert len(out) == 1 and isinstance(out[0], Rejection)
    assert reason in out[0].reason


def test_native_mqtt_forms():
    now = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)
    bare = parse_mqtt_message("frostwatch/east-low/air_temperature", b"-1.5", "frostwatch", now, STATIONS)
    assert bare == [Reading(now, "east-low", "air_temperature", -1.5)]
    js = parse_mqtt_message(
        "frostwatch/east-low/air_temperature", b'{"time": "2027-04-15T01:00:00-07:00", "value": 30.2, "unit": "degF"}',
        "frostwatch", now, STATIONS,
    )
    assert js[0].value == pytest.approx(-1.0) and js[0].time_utc == dt.datetime(2027, 4, 15, 8, tzinfo=dt.UTC)
    multi = parse_mqtt_message(
        "frostwatch/east-low", b'{"time": "2027-04-15T08:50:00Z", "air_temperature": 3.4, "relative_humidity": 81}',
        "frostwatch", now, STATIONS,
    )
    assert {r.quantity for r in multi} == {"air_temperature", "relative_humidity"}


@pytest.mark.parametrize(
    ("payload", "reason"),
    [
        (b'{"time": "2027-04-15T08:00:00Z", "value": 1' + b"0" * 400 + b"}", "401 digits"),
        (b'{"time": "0001-01-01T00:00:00+14:00", "value": 3}', "out of range once converted to UTC"),
        (b'{"time": "9999-12-31T23:59:59-14:00", "value": 3}', "out of range once converted to UTC"),
        (b'{"time": "2027-04-15T08:00:00Z", "value": 1e99999}', "not a finite number"),
        (b"1" + b"0" * 400, "401 digits"),
        (b"7" * 5000, "more than 4300 digits"),
        (b'{"time": "2027-04-15T08:00:00Z", "value": 2.0, "value": 40.0}', "appears more than once"),
        (b'{"time": "2027-04-15T08:00:00Z", "time": "2027-04-15T08:01:00Z", "value": 2.0}', "appears more than once"),
    ],
)
def test_overflowing_values_and_times_and_duplicate_keys_are_one_rejection_not_a_crash(payload, reason):
    """Issue 18: these raised OverflowError (or were taken silently, last key winning)."""
    now = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)
    out = parse_mqtt_message("frostwatch/east-low/air_temperature", payload, "frostwatch", now, STATIONS)
    assert len(out) == 1 and isinstance(out[0], Rejection), out
    assert reason in out[0].reason and len(out[0].reason) <= 500


def test_a_station_message_with_5000_unknown_keys_is_one_short_rejection_beside_its_good_reading():
    """Issue 18: 5,000 unknown keys made 5,000 rejection rows each repeating the list of
    quantities; now one row lists the offending keys once, cut short, and the good quantity is kept."""
    import json

    now = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)
    doc = {"time": "2027-04-15T08:59:00Z", "air_temperature": 2.5, **{f"junk{i}": i for i in range(5000)}}
    out = parse_mqtt_message("frostwatch/east-low", json.dumps(doc).encode(), "frostwatch", now, STATIONS,
                             max_payload_bytes=200_000)
    readings = [r for r in out if isinstance(r, Reading)]
    rejections = [r for r in out if isinstance(r, Rejection)]
    assert [r.quantity for r in readings] == ["air_temperature"]
    assert len(rejections) == 1
    reason = rejections[0].reason
    assert "junk0" in reason and "4990 more" in reason and "5000 in all" in reason and len(reason) <= 500
    assert reason.count("air_temperature") == 1  # the list of quantities once


@pytest.mark.parametrize(
    ("row", "reason"),
    [
        (b"0001-01-01T00:00:00+14:00,east-low,air_temperature,3.4,degC", "out of range once converted to UTC"),
        (b"9999-12-31T23:59:59-14:00,east-low,air_temperature,3.4,degC", "out of range once converted to UTC"),
        (b"2027-04-14T21:00:00-07:00,east-low,air_temperature,1" + b"0" * 400 + b",degC", "not a finite number"),
    ],
)
def test_csv_rows_that_overflow_are_rejected_by_line_and_the_rest_is_kept(row, reason):
    good = b"2027-04-14T21:05:00-07:00,east-low,air_temperature,3.4,degC"
    readings, rejections = parse_sensor_log_bytes(HEADER + row + b"\n" + good + b"\n", "t.csv", STATIONS)
    assert len(readings) == 1 and len(rejections) == 1
    assert reason in rejections[0].reason and rejections[0].where() == "t.csv:2"
