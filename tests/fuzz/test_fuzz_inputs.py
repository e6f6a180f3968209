"""Fuzzing: any input to the CSV parser, the MQTT parser or the config loader gives a reading, a
rejection or a clear config error, never a crash. Profile "ci" by default; run the long profile
(10,000 examples each) by hand with  HYPOTHESIS_PROFILE=long bash tests/run tests/fuzz
"""

import datetime as dt
import math
import tomllib

from hypothesis import given
from hypothesis import strategies as st

from frostwatch.config import config_from_dict, load_config
from frostwatch.errors import ConfigError, IngestError
from frostwatch.ingest.csvlog import parse_sensor_log_bytes
from frostwatch.ingest.parse import parse_mqtt_message
from frostwatch.models import Reading, Rejection
from frostwatch.units import QUANTITIES

STATIONS = {"a-low", "a-tower"}
NOW = dt.datetime(2027, 4, 15, 9, tzinfo=dt.UTC)

times = st.one_of(
    st.datetimes(timezones=st.just(dt.UTC)).map(lambda t: t.isoformat()),
    st.datetimes().map(lambda t: t.isoformat()),  # no offset: must be rejected
    st.text(max_size=30),
)
values = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(min_value=-10**6, max_value=10**6).map(str),
    st.sampled_from(["NaN", "inf", "-inf", "1e999", "", " ", "0x10", "1,5", "true"]),
    st.text(max_size=12),
)
units = st.one_of(st.sampled_from(["", "degC", "degF", "K", "%", "1", "m s-1", "mph", "knots", "hPa", "kPa", "furlongs"]),
                  st.text(max_size=8))
rows = st.tuples(times, st.sampled_from(sorted(STATIONS) + ["nobody", ""]),
                 st.sampled_from(sorted(QUANTITIES) + ["air_temprature", ""]), values, units)


def _check(readings, rejections):
    for r in readings:
        assert isinstance(r, Reading)
        assert math.isfinite(r.value)
        q = QUANTITIES[r.quantity]
        assert q.low <= r.value <= q.high  # nothing implausible ever reaches a decision
        assert r.time_utc.utcoffset() == dt.timedelta(0)
    for r in rejections:
        assert isinstance(r, Rejection) and r.reason


@given(st.lists(rows, max_size=20))
def test_structured_csv_rows_never_crash(row_list):
    def cell(x: str) -> str:
        return '"' + x.replace('"', '""') + '"' if any(c in x for c in ',"\n\r') else x

    body = "time,station,quantity,value,unit\n" + "\n".join(",".join(cell(c) for c in r) for r in row_list)
    readings, rejections = parse_sensor_log_bytes(body.encode("utf-8", "surrogatepass"), "fuzz.csv", STATIONS)
    _check(readings, rejections)


@given(st.binary(max_size=2000))
def test_raw_bytes_csv_never_crash(data):
    try:
        readings, rejections = parse_sensor_log_bytes(data, "fuzz.csv", STATIONS)
    except IngestError as exc:
        assert "fuzz.csv" in str(exc)
        return
    _check(readings, rejections)


json_leaf = st.one_of(st.none(), st.booleans(), st.floats(allow_nan=True), st.integers(), st.text(max_size=20))
json_doc = st.recursive(json_leaf, lambda c: st.one_of(st.lists(c, max_size=4), st.dictionaries(st.text(max_size=10), c, max_size=4)), max_leaves=20)


@given(st.sampled_from(["frostwatch/a-low/air_temperature", "frostwatch/a-low", "frostwatch/x/y/z", "other/a-low"]),
       st.one_of(st.binary(max_size=500), json_doc.map(lambda d: __import__("json").dumps(d).encode())))
def test_mqtt_messages_never_crash(topic, payload):
    out = parse_mqtt_message(topic, payload, "frostwatch", NOW, STATIONS, max_age_s=400 * 86400)
    assert out
    _check([r for r in out if isinstance(r, Reading)], [r for r in out if isinstance(r, Rejection)])


toml_scalars = st.one_of(st.text(max_size=15), st.integers(min_value=-10**9, max_value=10**9),
                         st.floats(allow_nan=False), st.booleans())
toml_tables = st.dictionaries(st.sampled_from(["name", "latitude", "longitude", "timezone", "id", "crop", "stage",
                                                "block", "height_m", "path", "port", "protection", "margin_c", "bogus"]),
                              toml_scalars, max_size=6)
configs = st.fixed_dictionaries({}, optional={
    "site": toml_tables, "blocks": st.lists(toml_tables, max_size=3), "stations": st.lists(toml_tables, max_size=3),
    "storage": toml_tables, "broker": toml_tables, "forecast": toml_tables, "alerts": toml_tables,
    "nonsense": toml_tables,
})


@given(configs)
def test_config_loader_gives_a_config_or_a_clear_error(raw):
    try:
        config_from_dict(raw)
    except ConfigError as exc:
        assert exc.problems
        for p in exc.problems:
            assert ":" in p and p.split(":")[0].strip()  # every problem names where it is


@given(st.binary(max_size=600))
def test_config_file_bytes_give_a_config_or_a_clear_error(tmp_path_factory, data):
    p = tmp_path_factory.mktemp("cfg") / "site.toml"
    p.write_bytes(data)
    try:
        load_config(p)
    except ConfigError as exc:
        assert str(p) in str(exc)
    except tomllib.TOMLDecodeError:  # pragma: no cover - must be wrapped
        raise AssertionError("TOML errors must be wrapped in ConfigError") from None
