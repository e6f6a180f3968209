"""The advisory pipeline, shared by `replay`, `backtest` (`frostwatch.backtest` imports this
module, never the other way) and the daemon so that a replayed night behaves like a live one:
readings window -> projection -> advice plan -> alert rules -> decision.

`Evaluator` keeps the little state that crosses evaluations (alert states, past nights learned
walk-forward); everything it calls is pure. Each evaluation ends in one `Decision` per block (the
level, the plan, the monitoring state, the projection): the daemon and replay store exactly these,
and every screen shows them.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from collections.abc import Iterator
from dataclasses import dataclass, field

import numpy as np

from frostwatch import forecast, reference
from frostwatch.advice import AdvicePlan, plan_advice
from frostwatch.alerts.levels import UNMONITORED, rank_of, step_for_level
from frostwatch.alerts.rules import BlockAlertState, protection_ran, rule_settings, step
from frostwatch.config import Config
from frostwatch.decision import Decision, summarise_projection
from frostwatch.display import Display
from frostwatch.forecast import PROTECTION_QUANTITIES, Calibration, Learner, NightRecord, Series, crosscheck
from frostwatch.models import Alert, Projection, SensorDoubt
from frostwatch.monitoring import block_monitoring, inputs_utc
from frostwatch.night import (
    LOOKBACK,
    Night,
    evening_date,
    evening_span_s,
    night_of_date,
    nights_of_dates,
    slice_series,
)
from frostwatch.physics import humidity


class WindowMemo:
    """What an evaluation works out from its readings window alone, kept for the evaluations that
    see the same window (`Evaluator(cfg, fixed_series=True)`: a replay).

    Only for a series that does not change from one evaluation to the next (a replay's whole
    log): a night's window is then fixed by where each series is cut, so two evaluations cut at
    the same rows see the same readings (an hourly log gives 30 evaluations at the 2-minute
    cadence between two readings), and the window itself is handed out again. `values` is
    emptied whenever the cut moves; what is kept in it must not depend on `now`."""

    def __init__(self):
        self.series: Series | None = None
        self.cut: tuple = ()
        self.window_series: Series = {}
        self.values: dict = {}
        self.start_s = self.end_lo_s = self.end_hi_s = math.nan

    def window(self, series: Series, start_s: float, end_s: float) -> tuple[Series, dict]:
        """`slice_series(series, start_s, end_s)` and the values kept for that window."""
        if series is self.series and start_s == self.start_s and self.end_lo_s <= end_s < self.end_hi_s:
            return self.window_series, self.values  # no reading from the last cut's end up to this one: the same cut
        cut = tuple((t.searchsorted(start_s, side="left"), t.searchsorted(end_s, side="right"))
                    for t, _ in series.values())
        # the cut stays while the end stays before every series' next reading
        self.start_s, self.end_lo_s = start_s, end_s
        self.end_hi_s = min((float(t[j]) for (t, _), (_, j) in zip(series.values(), cut, strict=True) if j < len(t)),
                            default=math.inf)
        if series is not self.series or cut != self.cut:
            self.series, self.cut, self.values = series, cut, {}
            self.window_series = {key: (t[i:j], v[i:j]) for (key, (t, v)), (i, j) in zip(series.items(), cut, strict=True)
                                  if j > i}
        return self.window_series, self.values


RUNNING_QUANTITIES = PROTECTION_QUANTITIES
RUNNING_FRESH_S = 1800.0  # a running flag older than this says nothing about now


def protection_running(series: Series, stations: list[str], now_s: float) -> bool | None:
    """True/False from the block's latest fresh running flag; None where the block has none."""
    latest: tuple[float, float] | None = None
    for sid in stations:
        for q in RUNNING_QUANTITIES:
            if (sid, q) in series:
                t, v = series[(sid, q)]
                if len(t) and now_s - t[-1] <= RUNNING_FRESH_S and (latest is None or t[-1] > latest[0]):
                    latest = (float(t[-1]), float(v[-1]))
    return None if latest is None else latest[1] >= 0.5


@dataclass
class Evaluation:
    """One evaluation of the whole site: per block its projection, plan and decision (same
    order as the config's blocks), and the alerts to send."""

    time_utc: dt.datetime
    night: Night
    projections: list[Projection] = field(default_factory=list)
    plans: list[AdvicePlan] = field(default_factory=list)
    decisions: list[Decision] = field(default_factory=list)
    alerts: list[Alert] = field(default_factory=list)
    doubts: dict[str, SensorDoubt] = field(default_factory=dict)  # the farm's cross-check (forecast.crosscheck)


class Evaluator:
    """Evaluates every block of a site at an injected `now`, remembering alert state and history."""

    def __init__(self, cfg: Config, fixed_series: bool = False):
        """`fixed_series`: every `evaluate` gets the same series, never changed (a replay's whole
        log), so what a readings window alone decides is kept while the window is the same
        (`WindowMemo`); the values are the same either way."""
        self.cfg = cfg
        self.memo = WindowMemo() if fixed_series else None
        self.display = Display(cfg.site.display_unit, cfg.site.tz)
        self.pressure_hpa = float(humidity.pressure_hpa_from_elevation(cfg.site.elevation_m))
        self.states: dict[str, BlockAlertState] = {}
        self.rule_settings = rule_settings(cfg)
        self.history: dict[str, list[NightRecord]] = {b.id: [] for b in cfg.blocks}
        self.learners: dict[str, Learner] = {b.id: Learner(cfg.forecast.calibration_nights) for b in cfg.blocks}
        self.learned: set[dt.date] = set()
        self._nights: dict[dt.date, Night] = {}
        self._span: tuple[float, float, Night | None] = (math.inf, -math.inf, None)  # night_at's last evening
        self._dusk_kept: tuple[Config | None, dict] = (None, {})  # (the config it was made with, the dusk memo)

    def night(self, evening: dt.date) -> Night:
        if evening not in self._nights:
            s = self.cfg.site
            self._nights[evening] = night_of_date(s.latitude, s.longitude, s.tz, evening)
        return self._nights[evening]

    def nights(self, evenings: list[dt.date]) -> list[Night]:
        """`night` of many evenings, the sun times of those not yet known worked out in one pass."""
        new = sorted({d for d in evenings if d not in self._nights})
        if new:
            s = self.cfg.site
            self._nights.update(zip(new, nights_of_dates(s.latitude, s.longitude, s.tz, new), strict=True))
        return [self._nights[d] for d in evenings]

    def night_at(self, t_utc: dt.datetime) -> Night:
        """The night of an instant (`evening_date`), kept with the span of instants of the same
        evening (`night.evening_span_s`): an evaluation every two minutes asks about 450 times a
        night."""
        t_s = t_utc.timestamp()
        lo_s, hi_s, night = self._span
        if lo_s <= t_s < hi_s:
            return night
        tz = self.cfg.site.tz
        evening = evening_date(t_utc, tz)
        night = self.night(evening)
        span = evening_span_s(evening, tz)
        if span is not None:
            self._span = (span[0], span[1], night)
        return night

    def calibration(self, block_id: str) -> Calibration:
        return self.learners[block_id].calibration()

    def add_record(self, block_id: str, rec: NightRecord) -> None:
        """A finished night joins the block's history and calibration (walk-forward: only after
        its window is over). A night with protection running is kept in the history but not
        learned from (its minimum is the protection's doing)."""
        self.history[block_id].append(rec)
        self.learners[block_id].learn(rec)

    def learn_night(self, night: Night, series: Series) -> list[NightRecord]:
        """Add a finished night's record to each block's history (walk-forward: call only after
        the night's observation window, sunrise + 1 h, has passed)."""
        if night.date in self.learned:
            return []
        self.learned.add(night.date)
        win = slice_series(
            series, (night.sunset_utc - LOOKBACK).timestamp(), night.sunrise_utc.timestamp() + 3600.0
        )
        out = []
        for b in self.cfg.blocks:
            rec = forecast.night_record(b, self.cfg, win, night, self.pressure_hpa)
            if rec is not None:
                self.add_record(b.id, rec)
                out.append(rec)
        return out

    def reference_inputs(self, block, window: Series, night: Night, now_s: float, doubts: dict | None = None) -> dict:
        """For a sprinkler block after sunrise: the reference air outside the wetted area (its
        station named even when silent, or left out by the farm's cross-check, `doubts`) and the
        night's driest measured dew point (the fallback's dry air); nothing for other blocks or
        before sunrise."""
        if block.protection not in ("overtree_sprinkler", "undertree_sprinkler") or now_s < night.sunrise_utc.timestamp():
            return {}
        out = crosscheck.left_out(doubts or {})
        st = reference.reference_station_for(self.cfg, block)
        ref = None if st is None or st.id in out else reference.reference_air(window, st.id, now_s, self.pressure_hpa)
        ids = [s.id for s in self.cfg.stations_of(block.id) + self.cfg.stations_of(None) if s.id not in out]
        driest = reference.driest_dew_point_c(window, ids, night.sunset_utc.timestamp(), now_s)
        return dict(reference=ref, reference_station=None if st is None else st.id, driest_dew_point_c=driest)

    def _inputs_utc(self, block, window: Series, now_s: float, memo: dict | None) -> dict:
        # the newest reading of each series in the window (it ends at now): the window decides it
        if memo is None:
            return inputs_utc(self.cfg, block, window, now_s)
        got = memo.get(("inputs_utc", block.id))
        if got is None:
            got = memo[("inputs_utc", block.id)] = inputs_utc(self.cfg, block, window, now_s)
        return dict(got)

    def _dusk_memo(self, night: Night, unchanged_before_s: float) -> dict | None:
        """The dusk forecasts kept from the evaluations before (`project_block`'s `dusk_memo`):
        emptied unless every reading up to tonight's dusk is one the evaluation before saw (no
        reading added at or before dusk since) and the config is the same."""
        if self.memo is not None or unchanged_before_s == -math.inf:  # a replay: its window memo keeps them
            self._dusk_kept = (None, {})
            return None
        cfg, kept = self._dusk_kept
        if cfg is not self.cfg or not unchanged_before_s > night.dusk_utc.timestamp():
            kept = {}
            self._dusk_kept = (self.cfg, kept)
        return kept

    def evaluate(self, now_utc: dt.datetime, series: Series, unchanged_before_s: float = -math.inf) -> Evaluation:
        """Project, advise and run the alert rules for every block at `now_utc`.

        `series` may hold more than needed; only readings from 6 h before this night's sunset up
        to `now_utc` are used (no peeking at the future). `unchanged_before_s`: every reading of
        `series` before this instant [s] is one of the series of the call before, and that
        series' readings are all here (the daemon's night cache says so,
        `NightCache.snapshot`); what readings up to dusk alone decide (the dusk forecast) is then
        kept from one call to the next. The values are the same either way.
        """
        night = self.night_at(now_utc)
        start_s = (night.sunset_utc - LOOKBACK).timestamp()
        if self.memo is None:
            window, memo = slice_series(series, start_s, now_utc.timestamp()), None
        else:
            window, memo = self.memo.window(series, start_s, now_utc.timestamp())
        dusk_memo = self._dusk_memo(night, unchanged_before_s)
        now_s = now_utc.timestamp()
        # the farm's thermometers checked against each other once: every block and screen the same
        doubts = crosscheck.sensor_doubts(self.cfg, window, now_s, memo)
        ev = Evaluation(now_utc, night, doubts=doubts)
        for block in self.cfg.blocks:
            proj = forecast.project_block(
                now_utc, block, self.cfg, window, night, self.calibration(block.id), self.pressure_hpa, memo=memo,
                dusk_memo=dusk_memo, doubts=doubts,
            )
            running = protection_running(window, [s.id for s in self.cfg.stations_of(block.id)], now_s)
            ref_kw = self.reference_inputs(block, window, night, now_s, doubts)
            plan = plan_advice(proj, block, now_utc, self.pressure_hpa, series=window, protection_running=running,
                               **ref_kw)
            mon = block_monitoring(self.cfg, block, window, now_s, memo, doubts)
            state = self.states.get(block.id)
            if state is None:
                state = BlockAlertState()
            state, alerts = step(state, plan, proj, block, now_utc, night, self.display, mon, self.rule_settings)
            self.states[block.id] = state
            if not mon.monitored and state.unmonitored_since_utc is not None:
                mon = dataclasses.replace(mon, since_utc=state.unmonitored_since_utc)
            level = state.level if mon.monitored else UNMONITORED
            ev.projections.append(proj)
            ev.plans.append(plan)
            ev.decisions.append(Decision(
                block=block.id, as_of_utc=now_utc, night=night.date, level=level, rank=rank_of(level),
                frost_level=state.level, step=step_for_level(level, plan, protection_ran(state)), monitoring=mon,
                projection=summarise_projection(proj), plan=plan, alert_key=state.last_key,
                inputs_utc=self._inputs_utc(block, window, now_s, memo),
            ))
            ev.alerts.extend(alerts)
        return ev


DAY_INTERVAL_MIN = 15.0  # the daemon's day cadence ([daemon] day_interval_min)
MORNING_WATCH_H = 5.0  # morning evaluations run this long after sunrise (safe-to-stop can come late in dry air)


def evaluation_times(
    night: Night, interval_min: float, first_s: float, last_s: float, day_interval_min: float = DAY_INTERVAL_MIN
) -> list[dt.datetime]:
    """The daemon's cadence over one night: every `interval_min` from an hour before sunset to two
    hours after sunrise, then every `day_interval_min` through the morning, on whole multiples of
    the interval (UTC), within the data's span."""
    out = []
    night_end = night.sunrise_utc.timestamp() + 7200.0
    for step_min, lo, hi in (
        (interval_min, night.sunset_utc.timestamp() - 3600.0, night_end),
        (day_interval_min, night_end + 1.0, night.sunrise_utc.timestamp() + MORNING_WATCH_H * 3600.0),
    ):
        step_s = step_min * 60.0
        t = np.ceil(max(lo, first_s) / step_s) * step_s
        end = min(hi, last_s)
        while t <= end:
            out.append(dt.datetime.fromtimestamp(t, tz=dt.UTC))
            t += step_s
    return out


def nights_spanned(cfg: Config, first_utc: dt.datetime, last_utc: dt.datetime) -> list[dt.date]:
    tz = cfg.site.tz
    d0, d1 = evening_date(first_utc, tz), evening_date(last_utc, tz)
    return [d0 + dt.timedelta(days=i) for i in range((d1 - d0).days + 1)]


def run_replay(cfg: Config, series: Series, progress=None) -> list[Evaluation]:
    """Every night-time evaluation over the series, as the daemon would have made them.

    Nights are learned walk-forward, as the daemon's morning job learns them: right after the
    first evaluation at or past sunrise + 1 h, so no evaluation sees its own night's outcome
    before the night is over.
    """
    return [ev for night in iter_replay(cfg, series, progress) for ev in night]


def _any_reading(times: list[np.ndarray], start_s: float, end_s: float) -> bool:
    """Whether any of the sorted time arrays has a reading with start <= t <= end."""
    return any(np.searchsorted(t, start_s, side="left") < np.searchsorted(t, end_s, side="right") for t in times)


NEAR_DAYS = 3  # a night's window (sunset - 6 h to sunrise + 5 h) lies within this many days of its evening


def _dates_near_readings(times: list[np.ndarray]) -> set[int]:
    """Ordinals of every date within NEAR_DAYS of a reading's UTC date: the only evenings whose
    night can hold a reading (a typical-year file spans decades of dates, a year of them read)."""
    days = np.unique(np.concatenate([np.unique(np.floor_divide(t, 86400.0)) for t in times if len(t)]))
    epoch = dt.date(1970, 1, 1).toordinal()
    return {epoch + int(d) + k for d in days for k in range(-NEAR_DAYS, NEAR_DAYS + 1)}


def covered_nights(cfg: Config, series: Series, ev: Evaluator | None = None) -> list[Night]:
    """The nights a replay of `series` evaluates, in order: each with at least one reading of any
    station from 6 h before its sunset to the end of its morning watch (typical-year files splice
    months of different years; logs of two springs leave a year between them)."""
    if not series:
        return []
    ev = ev or Evaluator(cfg)
    first = min(float(t[0]) for t, _ in series.values())
    last = max(float(t[-1]) for t, _ in series.values())
    starts = [t for t, _ in series.values()]
    nights = []
    near = _dates_near_readings(starts)
    spanned = nights_spanned(cfg, dt.datetime.fromtimestamp(first, dt.UTC), dt.datetime.fromtimestamp(last, dt.UTC))
    # no reading within days of a date: its sun times are not worked out; the others' in one pass
    for night in ev.nights([d for d in spanned if d.toordinal() in near]):
        window_end = night.sunrise_utc.timestamp() + MORNING_WATCH_H * 3600.0
        if _any_reading(starts, (night.sunset_utc - LOOKBACK).timestamp(), window_end):
            nights.append(night)  # covered by the logs (a night without any reading is not)
    return nights


def iter_replay_nights(cfg: Config, series: Series, chosen=None) -> Iterator[tuple[int, int, list[Evaluation]]]:
    """(k, total, that night's evaluations) for each covered night k (`covered_nights`), as the
    daemon would have made them, walk-forward.

    `chosen(k)`, if given, says whether night k is evaluated; a night not chosen is only learned
    (its record joins the calibration before the next night, as it would after its morning), so
    night k's evaluations are the same whichever nights before it were chosen: the calibration
    at a night's start depends only on the nights before it, and alert states start afresh each
    night (`alerts.rules.step`). This lets `frostwatch.replay` share nights among processes."""
    if not series:
        return
    first = min(float(t[0]) for t, _ in series.values())
    last = max(float(t[-1]) for t, _ in series.values())
    ev = Evaluator(cfg, fixed_series=True)
    nights = covered_nights(cfg, series, ev)
    pending: list[Night] = []
    total = len(nights)
    last_s = -np.inf
    for k, night in enumerate(nights):
        if chosen is not None and not chosen(k):
            for n in pending:
                ev.learn_night(n, series)
            pending = []
            if night.sunrise_utc.timestamp() + 3600.0 <= last:  # its morning is in the logs
                ev.learn_night(night, series)
            else:
                pending.append(night)
            times = evaluation_times(night, cfg.forecast.evaluation_interval_min, first, last)
            if times:  # the instants it would have run: the next night's evaluations start after them
                last_s = max(last_s, times[-1].timestamp())
            continue
        out: list[Evaluation] = []
        learn_at = night.sunrise_utc.timestamp() + 3600.0
        for now in evaluation_times(night, cfg.forecast.evaluation_interval_min, first, last):
            if now.timestamp() <= last_s:
                continue  # a day under 6 h (polar night): the last night's morning watch already ran it
            last_s = now.timestamp()
            for n in [n for n in pending if now.timestamp() >= n.sunrise_utc.timestamp() + 3600.0]:
                ev.learn_night(n, series)
                pending.remove(n)
            out.append(ev.evaluate(now, series))
            if now.timestamp() >= learn_at and night.date not in ev.learned:
                ev.learn_night(night, series)  # the daemon's morning job, after that tick's evaluation
        if night.date not in ev.learned:
            pending.append(night)  # the logs end before its morning: learned before the next night
        yield k, total, out


def iter_replay(cfg: Config, series: Series, progress=None) -> Iterator[list[Evaluation]]:
    """As `run_replay`, one night's evaluations at a time (a season need not be held in memory).

    Evaluations run forward in time, each instant once: where the day is shorter than the morning
    watch and the hour before sunset (near and in the polar night), the next night starts after
    the last one's morning watch. A night without a single reading of any station from 6 h before
    its sunset to the end of its morning watch is not evaluated: the logs do not cover it
    (`covered_nights`)."""
    for k, total, out in iter_replay_nights(cfg, series):
        yield out
        if progress:
            progress(k + 1, total)


def with_time(p: Projection) -> dict:
    """A projection as the replay JSON of DESIGN.md 1.4 shows it."""
    iso = lambda t: None if t is None else t.isoformat().replace("+00:00", "Z")  # noqa: E731
    return {
        "time": iso(p.time_utc),
        "block": p.block,
        "station": p.station,
        "air_temp_c": p.air_temp_c,
        "wet_bulb_c": None if p.wet_bulb_c is None else round(p.wet_bulb_c, 2),
        "dew_point_c": None if p.dew_point_c is None else round(p.dew_point_c, 2),
        "predicted_min_c": p.predicted_min_c,
        "predicted_min_at": iso(p.predicted_min_at_utc),
        "band_c": p.band_c,
        "band_low_c": p.band_low_c,
        "band_high_c": p.band_high_c,
        "t10_crossing_at": iso(p.crossings_utc.get("t10")),
        "t10_margin_crossing_at": iso(p.crossings_utc.get("t10_margin")),
        "t10_margin_cold_edge_crossing_at": iso(p.crossings_utc.get("t10_margin_cold_edge")),
        "t90_crossing_at": iso(p.crossings_utc.get("t90")),
        "wet_bulb_t10_crossing_at": iso(p.crossings_utc.get("wet_bulb_t10")),
        "inversion_c": p.inversion_c,
        "projected_inversion_c": p.projected_inversion_c,
        "inversion_class": p.inversion_class,
        "wind_speed_m_s": p.wind_speed_m_s,
        "regime": p.regime,
        "method": p.method,
        "notes": list(p.notes),
    }


__all__ = [
    "Evaluator", "Evaluation", "WindowMemo", "run_replay", "iter_replay", "iter_replay_nights", "covered_nights", "slice_series",
    "evaluation_times", "with_time", "dataclasses",
]
