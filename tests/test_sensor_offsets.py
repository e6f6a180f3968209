"""A thermometer that reads consistently warm or cold against the farm's others (grower-needs B5),
checked on synthetic farms whose truth is set here: a known offset is added to one sensor's
readings, and the check must find it (sign and size) or, where the physics says it is weather
(a cold-air pocket in calm air), must not."""

from __future__ import annotations

import datetime as dt
import math
import random
from zoneinfo import ZoneInfo

from frostwatch.forecast import offsets as off
from frostwatch.models import Reading
from frostwatch.store import Store
from frostwatch.store import reports as q

TZ = ZoneInfo("America/Los_Angeles")
START = dt.datetime(2027, 4, 1, 7, tzinfo=dt.UTC)  # midnight local
ROLES = {"east-low": "crop", "east-tower": "tower", "river-low": "crop", "river-low-b": "crop", "hill-low": "crop"}


def _farm_hours(days: int, windy, bias_k: dict[str, float], pocket_k: float = 0.0, wind: bool = True,
                seed: int = 1) -> list[tuple[int, str, str, float]]:
    """Hourly means of a farm: a diurnal air temperature (10 +- 6 degC), the tower 0.1 K cooler
    under wind and 3 K warmer than crop height in calm night hours (an inversion), each sensor with
    0.15 K of noise; `windy(h)` says whether local hour h of the day is windy (4.5 m/s, else 0.8);
    `pocket_k` makes river-low-b that much colder in calm hours (a cold-air pocket)."""
    rnd = random.Random(seed)
    out = []
    h0 = int(START.timestamp()) // 3600
    for i in range(days * 24):
        h, hod = h0 + i, i % 24
        is_windy = windy(hod)
        base = 10.0 + 6.0 * math.sin((hod - 9) / 24 * 2 * math.pi)
        if wind:
            out.append((h, "east-low", "wind_speed", 4.5 if is_windy else 0.8))
        for s, role in ROLES.items():
            t = base + rnd.gauss(0.0, 0.15) + bias_k.get(s, 0.0)
            if role == "tower":
                t += -0.1 if is_windy else 3.0
            if s == "river-low-b" and not is_windy:
                t -= pocket_k
            out.append((h, s, "air_temperature", t))
    return out


def _afternoons(hod: int) -> bool:
    return 12 <= hod < 17  # a windy afternoon every day: 5 windy hours a day


def _check(hourly) -> off.OffsetCheck:
    end = START + dt.timedelta(days=14)
    return off.sensor_offsets(hourly, ROLES, TZ, START, end)


def _by_id(check: off.OffsetCheck) -> dict[str, off.SensorOffset]:
    return {s.station: s for s in check.sensors}


def test_a_sensor_15_k_warm_is_flagged_with_its_sign_and_size():
    check = _check(_farm_hours(4, _afternoons, {"hill-low": 1.5}))
    s = _by_id(check)["hill-low"]
    assert s.flagged and abs(s.offset_k - 1.5) <= 0.2
    assert (s.hours, s.days) == (20, 4)
    assert [x.station for x in check.flagged] == ["hill-low"]
    assert check.not_judged is None


def test_a_sensor_reading_cold_is_flagged_cold():
    s = _by_id(_check(_farm_hours(4, _afternoons, {"river-low": -1.3})))["river-low"]
    assert s.flagged and abs(s.offset_k + 1.3) <= 0.2


def test_a_sensor_05_k_warm_is_not_flagged():
    check = _check(_farm_hours(4, _afternoons, {"hill-low": 0.5}))
    s = _by_id(check)["hill-low"]
    assert s.judged and not s.flagged and abs(s.offset_k - 0.5) <= 0.2
    assert check.flagged == []


def test_a_tower_matches_crop_height_under_wind_though_the_calm_night_inversion_is_3_k():
    s = _by_id(_check(_farm_hours(4, _afternoons, {})))["east-tower"]
    assert s.judged and not s.flagged and abs(s.offset_k + 0.1) <= 0.2


def test_a_cold_air_pocket_4_k_colder_in_calm_hours_is_not_flagged():
    """A radiation night: calm from dusk to dawn, the pocket 4 K colder; only the windy
    afternoons are compared, where it reads with the others."""
    check = _check(_farm_hours(4, _afternoons, {}, pocket_k=4.0))
    s = _by_id(check)["river-low-b"]
    assert s.judged and not s.flagged and abs(s.offset_k) <= 0.2
    # the pocket is there: at 03:00 local it reads about 4 K below the crop sensors' median
    hourly = _farm_hours(4, _afternoons, {}, pocket_k=4.0)
    h3 = int(START.timestamp()) // 3600 + 3
    at3 = {s: v for h, s, qn, v in hourly if h == h3 and qn == "air_temperature"}
    crop = sorted(at3[s] for s in ("east-low", "river-low", "hill-low"))
    assert abs(at3["river-low-b"] - crop[1] + 4.0) <= 0.6


def test_calm_hours_alone_judge_nothing():
    check = _check(_farm_hours(4, lambda h: False, {"hill-low": 1.5}, pocket_k=4.0))
    assert check.not_judged == off.NO_WINDY_HOUR and check.flagged == []
    assert all(s.hours == 0 and s.offset_k is None for s in check.sensors)


def test_no_wind_sensor_judges_nothing_and_says_so():
    check = _check(_farm_hours(4, _afternoons, {"hill-low": 1.5}, wind=False))
    assert check.not_judged == off.NO_WIND and check.flagged == [] and check.mixed_hours == 0


def test_one_windy_day_is_not_enough():
    check = _check(_farm_hours(1, _afternoons, {"hill-low": 1.5}))
    s = _by_id(check)["hill-low"]
    assert s.hours == 5 and not s.judged and not s.flagged
    assert check.not_judged == off.TOO_FEW_WINDY_HOURS


def test_a_farm_with_two_thermometers_has_nothing_to_compare():
    hourly = _farm_hours(4, _afternoons, {"hill-low": 1.5})
    roles = {"hill-low": "crop", "east-low": "crop"}
    check = off.sensor_offsets(hourly, roles, TZ, START, START)
    assert check.not_judged == off.TOO_FEW_THERMOMETERS and check.flagged == []


def test_the_stores_hourly_means_find_the_offset_from_minute_readings(tmp_path):
    """Minute readings through the store's aggregate: the hour means match numpy's own, and
    the +1.5 K sensor is flagged."""
    store = Store.open(tmp_path / "f.db")
    rnd = random.Random(3)
    readings = []
    for minute in range(3 * 24 * 60):
        t = START + dt.timedelta(minutes=minute)
        hod = t.astimezone(TZ).hour
        base = 8.0 + 5.0 * math.sin((hod - 9) / 24 * 2 * math.pi)
        readings.append(Reading(t, "east-low", "wind_speed", 5.0 if 11 <= hod < 16 else 1.0))
        for s in ROLES:
            readings.append(Reading(t, s, "air_temperature", round(base + rnd.gauss(0, 0.2) + (1.5 if s == "hill-low" else 0), 2)))
    store.add_readings(readings, "test")
    rows = q.hourly_means(store, START, START + dt.timedelta(days=3))
    first = [r.value for r in readings[:60 * 6] if r.station == "hill-low" and r.quantity == "air_temperature"]
    got = {(h, s, qn): m for h, s, qn, m in rows}
    assert math.isclose(got[(int(START.timestamp()) // 3600, "hill-low", "air_temperature")], sum(first) / 60, abs_tol=1e-9)
    check = off.sensor_offsets(rows, ROLES, TZ, START, START + dt.timedelta(days=3))
    s = _by_id(check)["hill-low"]
    assert s.flagged and abs(s.offset_k - 1.5) <= 0.2 and (s.hours, s.days) == (15, 3)
    store.close()


def test_hours_a_block_ran_its_sprinklers_leave_its_thermometers_out():
    """A windy advective night with river's sprinklers running: river-low-b reads the ice (3 K
    above the air) for those hours. With the running sensor those hours do not count for the
    block; without it (no block known) the sensor would be named."""
    hourly = _farm_hours(4, _afternoons, {})
    h0 = int(START.timestamp()) // 3600
    sprinkled = []
    for day in range(3):  # three windy nights, 00:00-08:00 local, sprinklers on
        for k in range(8):
            h = h0 + 24 * day + k
            sprinkled += [(h, "east-low", "wind_speed", 4.0), (h, "river-low", "sprinkler_running", 1.0)]
            sprinkled += [(h, s, "air_temperature", -3.0 + (3.0 if s == "river-low-b" else 0.0)) for s in ROLES]
    night = {h for h, *_ in sprinkled}
    hourly = [r for r in hourly if r[0] not in night] + sprinkled
    blocks = {"east-low": "east", "east-tower": "east", "river-low": "river", "river-low-b": "river", "hill-low": "hill"}
    end = START + dt.timedelta(days=14)
    seen = _by_id(off.sensor_offsets(hourly, ROLES, TZ, START, end, blocks))["river-low-b"]
    assert not seen.flagged and abs(seen.offset_k) <= 0.2 and seen.hours == 20
    blind = _by_id(off.sensor_offsets(hourly, ROLES, TZ, START, end))["river-low-b"]
    assert blind.hours == 44 and blind.flagged and abs(blind.offset_k - 3.0) <= 0.3
