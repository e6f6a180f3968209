"""Thermometers to check: the farm's sensors that read consistently warm or cold against the others
in windy hours (`forecast.offsets`), for the night report (the last OFFSET_WINDOW_DAYS days up to
the report's end) and the season report (the whole season), in the grower's units.

Reads the store through one aggregate (`store.reports.hourly_means`); raises `StoreError` only
when the store cannot be read.
"""

from __future__ import annotations

import datetime as dt
import html

from frostwatch.config import Config
from frostwatch.display import Display
from frostwatch.forecast import offsets as off
from frostwatch.store import Store
from frostwatch.store import reports as q

OFFSET_WINDOW_DAYS = 14  # the night report looks this far back: one night rarely holds 6 windy hours on 2 days
e = html.escape


def offset_check(cfg: Config, store: Store, start_utc: dt.datetime, end_utc: dt.datetime) -> off.OffsetCheck:
    """The offsets of the config's air thermometers from the readings with start <= time < end."""
    roles = {s.id: s.role for s in cfg.stations if s.role in off.AIR_ROLES}
    hourly = q.hourly_means(store, start_utc, end_utc, ("air_temperature", "wind_speed", *off.settings.PROTECTION_QUANTITIES))
    return off.sensor_offsets(hourly, roles, cfg.site.tz, start_utc, end_utc, {s.id: s.block for s in cfg.stations})


def recent_offset_check(cfg: Config, store: Store, end_utc: dt.datetime) -> off.OffsetCheck:
    return offset_check(cfg, store, end_utc - dt.timedelta(days=OFFSET_WINDOW_DAYS), end_utc)


def _hours(n: int) -> str:
    return f"{n} windy hour{'s' if n != 1 else ''}"


def _days(n: int) -> str:
    return f"{n} day{'s' if n != 1 else ''}"


def what_to_do(s: off.SensorOffset) -> str:
    if s.role == "tower":
        return ("check its radiation shield and its calibration (an ice bath); a tower sensor that reads off "
                "misjudges the inversion, and with it whether wind machines will help")
    if s.role == "weather":
        when = "too early" if (s.offset_k or 0.0) > 0 else "later than needed"
        return ("check its radiation shield and its calibration (an ice bath); a weather station that reads "
                f"{'warm' if (s.offset_k or 0.0) > 0 else 'cold'} makes frostwatch call the sprinklers' stop {when}")
    if s.offset_k is not None and s.offset_k > 0:
        return ("check its radiation shield and its calibration (an ice bath); a warm sensor makes frostwatch "
                "call frost late for its block")
    return ("check its calibration (an ice bath) and where it hangs; a cold sensor makes frostwatch call frost "
            "early for its block")


def flagged_sentence(s: off.SensorOffset, d: Display) -> str:
    """'hill-low read 1.6 °C warmer than the farm's other thermometers in 9 windy hours on 3 days: check ...'"""
    word = "warmer" if (s.offset_k or 0.0) > 0 else "colder"
    return (f"{s.station} read {d.delta(abs(s.offset_k or 0.0))} {word} than the farm's other thermometers in "
            f"{_hours(s.hours)} on {_days(s.days)}: {what_to_do(s)}.")


def not_judged_sentence(check: off.OffsetCheck, d: Display) -> str:
    wind = d.wind_limit(off.MIXED_WIND_M_S)
    return {
        off.TOO_FEW_THERMOMETERS: f"the farm has {check.air_count} air thermometer"
                                  f"{'s' if check.air_count != 1 else ''}; at least {off.MIN_OTHERS + 1} are needed "
                                  "to compare each with the others",
        off.NO_WIND: "no wind was measured, and well-mixed air is never assumed",
        off.NO_WINDY_HOUR: f"no hour had a wind of {wind} or more (in calm air the blocks really differ)",
        off.TOO_FEW_WINDY_HOURS: f"only {_hours(check.mixed_hours)}; each thermometer needs {off.FLAG_MIN_HOURS} "
                                 f"on {off.FLAG_MIN_DAYS} days",
    }.get(check.not_judged or "", "")


def summary_sentence(check: off.OffsetCheck, d: Display, span: str) -> str:
    """One line for the page when no thermometer is flagged: what was compared, or why nothing was."""
    if check.not_judged:
        return f"Thermometers not compared with each other over {span}: {not_judged_sentence(check, d)}."
    return (f"Thermometers compared with each other in {_hours(check.mixed_hours)} (wind {d.wind_limit(off.MIXED_WIND_M_S)} "
            f"or more) over {span}: none reads {d.delta(off.FLAG_OFFSET_K)} or more warmer or colder than the others.")


def night_section(check: off.OffsetCheck, d: Display) -> str:
    """HTML for the night report: a 'Thermometers to check' section when one is flagged, else one note."""
    span = f"the last {OFFSET_WINDOW_DAYS} days"
    if not check.flagged:
        return f'<p id="thermometers" class="note">{e(summary_sentence(check, d, span))}</p>'
    items = "".join(f"<li>{e(flagged_sentence(s, d))}</li>" for s in check.flagged)
    return (f'<h2>Thermometers to check</h2><ul id="thermometers">{items}</ul>'
            f'<p class="note">Compared over {span}, in hours with a wind of {e(d.wind_limit(off.MIXED_WIND_M_S))} or '
            "more, when the air is stirred and the blocks read within a few tenths of each other. frostwatch still "
            "uses these readings as they come; it does not correct them.</p>")


def record(check: off.OffsetCheck) -> dict:
    """The check as stored in the night's JSON record (SI units, UTC)."""
    iso = lambda t: t.isoformat().replace("+00:00", "Z")  # noqa: E731
    return {
        "start": iso(check.start_utc), "end": iso(check.end_utc), "mixed_wind_m_s": off.MIXED_WIND_M_S,
        "flag_offset_k": off.FLAG_OFFSET_K, "windy_hours": check.mixed_hours, "not_judged": check.not_judged,
        "sensors": [{"station": s.station, "role": s.role,
                     "offset_k": None if s.offset_k is None else round(s.offset_k, 2), "hours": s.hours,
                     "days": s.days, "flagged": s.flagged} for s in check.sensors],
    }


def season_table(check: off.OffsetCheck, d: Display) -> str:
    """HTML for the season report: every air thermometer's offset over the season."""
    span = "the season"
    rows = "".join(
        f"<tr><td>{e(s.station)}</td><td>{e(s.role)}</td>"
        f"<td class='num'>{'' if s.offset_k is None else ('+' if s.offset_k > 0 else '') + d.delta(s.offset_k, 2)}</td>"
        f"<td class='num'>{s.hours}</td><td class='num'>{s.days}</td>"
        f"<td>{'check it' if s.flagged else ('too few windy hours' if not s.judged else 'agrees')}</td></tr>"
        for s in check.sensors)
    notes = "".join(f"<li>{e(flagged_sentence(s, d))}</li>" for s in check.flagged)
    head = (f"<p class='note'>{e(summary_sentence(check, d, span))}</p>" if not check.flagged
            else f"<ul id='season-thermometers-flagged'>{notes}</ul>")
    return (f"<h2>Thermometers against each other</h2>{head}"
            f"<div class='scroll'><table id='thermometer-offsets'><tr><th>sensor</th><th>role</th>"
            f"<th>reads warmer (+) or colder than the others</th><th>windy hours</th><th>days</th><th></th></tr>"
            f"{rows}</table></div><p class='note'>The median, over the hours with a wind of "
            f"{e(d.wind_limit(off.MIXED_WIND_M_S))} or more, of each sensor's hourly mean minus the median of the "
            f"others'. Named to check at {e(d.delta(off.FLAG_OFFSET_K))} or more over {off.FLAG_MIN_HOURS} hours on "
            f"{off.FLAG_MIN_DAYS} days; the fix is an ice-bath check and a look at the radiation shield.</p>")
