"""What the daemon does at each moment, apart from threads and MQTT: evaluate the blocks, run the
daily jobs (dusk briefing, morning report, housekeeping) once per night, check sensor health.
The clock is injected: tests step it.
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import threading
from collections.abc import Callable

from frostwatch import health
from frostwatch import reload as config_reload
from frostwatch.config import Config
from frostwatch.daemon_settings import DaemonSettings
from frostwatch.decision import decision_signature
from frostwatch.errors import UsageError
from frostwatch.night import Night
from frostwatch.nightcache import NightCache
from frostwatch.pipeline import LOOKBACK, Evaluator
from frostwatch.status.document import Liveness, decision_json
from frostwatch.store import Store, daemon_state, maintenance
from frostwatch.store import decisions as stored_decisions

log = logging.getLogger("frostwatch.daemon")

DONE_META = "daemon.done."  # + job name -> the evening date it last ran for
PROMPT_REASON = "new reading"  # an evaluation prompted by a reading near a trigger (not scheduled)

def _utc_now() -> dt.datetime:
    return dt.datetime.now(dt.UTC)


def commit_urgently(core: Core, readings, now: dt.datetime, since_prompt_s: float, debounce_s: float) -> bool:
    """Whether the ingest writer should commit these readings within urgent_delay_s rather than
    batch_delay_s: only when they would get a prompt evaluation at once, i.e. a crop-height
    reading near a block's trigger in the watch window (Core.wants_prompt_evaluation) and no
    prompt evaluation in the last debounce_s. A reading that arrives while the debounce holds
    would wait for the next evaluation anyway, so it waits for the ordinary batch: on a frost
    night that is one urgent commit per debounce_s instead of one a second (bench/storage.py)."""
    return since_prompt_s >= debounce_s and core.wants_prompt_evaluation(readings, now)


class Core:
    """What the daemon does at each moment, independent of threads and MQTT: evaluate, run the
    daily jobs once per night, check sensor health. `clock` is injected (tests step it)."""

    def __init__(self, cfg: Config, settings: DaemonSettings, store: Store, outbox, clock: Callable[[], dt.datetime] = _utc_now):
        self.cfg = cfg
        self.s = settings
        self.store = store
        self.outbox = outbox
        self.clock = clock
        self.evaluator = Evaluator(cfg)
        # tonight's readings in memory: read from the store once a night, then fed by the ingest
        # writer after each commit (readings_committed); evaluations never re-read the window
        self.cache = NightCache(store, self.evaluator.night_at, LOOKBACK)
        self.eval_lock = threading.Lock()
        self.last_eval_utc: dt.datetime | None = None
        self.evaluations = 0
        self.last_projection: dict[str, float | None] = {}
        self.doubts: dict = {}  # the last evaluation's cross-check (forecast.crosscheck): raised by check_health
        self.health_active: dict[str, health.Problem] = {}
        self.rules = health.HealthRules(
            silent_after_intervals=settings.silent_after_intervals,
            battery_low_v=settings.battery_low_v,
        )
        self.publish: Callable[[str, object], None] = lambda topic, doc: None
        self.on_evaluated: Callable[[dt.datetime, dict], None] = lambda now, blocks: None  # the fleet publisher
        self.job_runs: dict[str, int] = {}
        self.job_log: list[tuple[str, dt.date, dt.datetime]] = []
        self._stored_signatures: dict[str, tuple] = {}  # block -> decision_signature, last stored evaluation
        self.evaluations_not_stored = 0
        self._cfg_fingerprint = config_reload.fingerprint(cfg.path)
        self._saved_states: dict = {}  # block -> its rule state as last stored or read back (frozen)
        self._sequences_checked: str | None = None  # the night whose alert numbering was checked
        self._restore_rule_states()
        self._restore_health()

    # -- the alert rules' memory across a restart --------------------------------------------------
    def _restore_rule_states(self) -> None:
        """Each block's alert-rule state as the last run stored it: a daemon restarted in the night
        (a crash, an upgrade, a power cut) goes on from there. Without it, tonight's dusk message
        and the current level went out again under new keys, and an alert already acknowledged
        fired again, repeating and escalating. A state of another night is reset by the rules."""
        from frostwatch.alerts.rules import state_from_json

        try:
            stored = daemon_state.rule_states(self.store)
        except Exception:  # noqa: BLE001 - the rules then start afresh, as before
            log.exception("could not read the stored alert-rule states; the rules start afresh")
            return
        for block, text in stored.items():
            if block not in {b.id for b in self.cfg.blocks}:
                continue  # a block removed from the config since
            try:
                state = state_from_json(json.loads(text))
            except (ValueError, TypeError):
                log.warning("stored alert-rule state of block %s is unreadable; its rules start afresh", block)
                continue
            self.evaluator.states[block] = self._saved_states[block] = state

    def _continue_sequences(self, now: dt.datetime) -> None:
        """A block with no stored state for tonight (a store from before states were kept, or one
        that could not be written) numbers its alerts on from tonight's stored ones: a key used
        again is refused by the outbox as already sent, and that alert would never go out."""
        from frostwatch.alerts.rules import BlockAlertState

        night_key = self.evaluator.night_at(now).date.isoformat()
        if self._sequences_checked == night_key:
            return
        self._sequences_checked = night_key
        for b in self.cfg.blocks:
            st = self.evaluator.states.get(b.id)
            if st is not None and st.night == night_key:
                continue
            try:
                seq = daemon_state.last_alert_sequence(self.store, b.id, night_key)
            except Exception:  # noqa: BLE001 - numbering from 1, as before
                log.exception("could not read tonight's alerts of block %s", b.id)
                continue
            if seq:
                self.evaluator.states[b.id] = BlockAlertState(night=night_key, sequence=seq)

    def _save_rule_states(self) -> None:
        """The blocks' rule states that changed since last stored (after the alerts are queued: a
        state never claims an alert the outbox does not hold)."""
        from frostwatch.alerts.rules import state_to_json

        # the states are frozen: a field-by-field comparison tells a change, no JSON made otherwise
        changed = {b: st for b, st in self.evaluator.states.items() if self._saved_states.get(b) != st}
        if not changed:
            return
        try:
            daemon_state.save_rule_states(
                self.store, {b: json.dumps(state_to_json(st), sort_keys=True) for b, st in changed.items()})
        except Exception:  # noqa: BLE001 - the evaluation stands; the next one tries again
            log.exception("could not store the alert-rule states")
            return
        self._saved_states.update(changed)

    # -- the config in force ---------------------------------------------------------------------
    def reload_config(self, now: dt.datetime, force: bool = False) -> bool:
        """Apply a changed config file's block keys (stage, thresholds, ...) from now on
        (`frostwatch.reload`); called before every evaluation and on SIGHUP (`force`). A file that
        does not load is refused, logged and recorded; the config in force stays."""
        fp = config_reload.fingerprint(self.cfg.path)
        if not force and (fp is None or fp == self._cfg_fingerprint):
            return False
        self._cfg_fingerprint = fp
        r = config_reload.apply_config_change(self.cfg)
        if r.error:
            log.error("config %s changed but does not load; the config in force stays: %s", self.cfg.path, r.error)
            self.store.add_event(now, "daemon", "config reload refused", r.error[:2000])
            return False
        if r.waiting:
            log.warning("config changes that take effect only after a restart: %s", "; ".join(r.waiting))
        if not r.changed:
            return False
        self.cfg = r.cfg
        self.evaluator.cfg = r.cfg
        log.info("config reloaded: %s", "; ".join(r.applied))
        self.store.add_event(now, "daemon", "config reloaded", "; ".join(r.applied)[:2000])
        return True

    # -- evaluations ---------------------------------------------------------------------------
    def in_watch_window(self, now: dt.datetime) -> bool:
        return self.evaluator.night_at(now).contains(now)

    def tick(self, now: dt.datetime | None = None) -> None:
        """The interval job: evaluate if due, then run any daily job that is due."""
        # UTC always: subtracting two datetimes of one local zone gives wall-clock, not real, time
        now = (now or self.clock()).astimezone(dt.UTC)
        due = self.last_eval_utc is None or self.in_watch_window(now) or (
            (now - self.last_eval_utc).total_seconds() >= self.s.day_interval_min * 60.0 - 1.0
        )
        if due:
            self.evaluate(now, "scheduled")
        self.daily(now)

    def evaluate(self, now: dt.datetime | None = None, reason: str = "scheduled"):
        now = (now or self.clock()).astimezone(dt.UTC)
        now = now.replace(microsecond=now.microsecond // 1000 * 1000)  # the store keeps milliseconds
        with self.eval_lock:
            self.reload_config(now)  # a stage or threshold change takes effect at this evaluation
            series, unchanged_before_s = self.cache.snapshot(now)
            self._continue_sequences(now)
            ev = self.evaluator.evaluate(now, series, unchanged_before_s)
            stored = self._worth_storing(ev, reason)
            # projections and decisions first (one transaction, one fsync per evaluation), then
            # the alerts written from them: a stored alert always has its decision beside it
            try:
                if stored:
                    daemon_state.save_evaluation(self.store, ev.projections, {}, ev.decisions)
            finally:
                if ev.alerts:
                    self.outbox.submit(ev.alerts, now)
            if stored:
                self._save_rule_states()
            self.last_eval_utc = now
            self.evaluations += 1
            self.doubts = ev.doubts
            for p in ev.projections:
                self.last_projection[p.block] = p.predicted_min_c
        if not stored:  # nothing a grower would notice changed: screens keep the stored decision
            self.evaluations_not_stored += 1
            log.info("evaluated %d blocks (%s): no change, not stored", len(ev.decisions), reason)
            return ev
        # the same JSON `frostwatch status --json` shows for each block, on the status topic
        live = Liveness(True, now, False, 0.0)
        d = self.evaluator.display
        blocks = {}
        for dcs in ev.decisions:
            blocks[dcs.block] = decision_json(dcs, dcs.block, now, live, d, float("inf"), self.cfg.block(dcs.block).name)
            blocks[dcs.block]["evaluation"] = reason
        for b, doc in blocks.items():
            self.publish(f"blocks/{b}", doc)
        self.on_evaluated(now, blocks)
        log.info("evaluated %d blocks (%s)%s", len(blocks), reason, f", {len(ev.alerts)} alerts" if ev.alerts else "")
        return ev

    def _worth_storing(self, ev, reason: str) -> bool:
        """Every evaluation is stored (and published) except one prompted by a new reading
        (PROMPT_REASON: on a frost night up to one per debounce_s) that raised no alert and changed
        nothing a grower would notice in any block since the last stored one (decision_signature):
        its numbers moved a little, its advice did not. Scheduled evaluations, every
        night_interval_min, are always stored, so the stored decision stays fresh for every
        screen. This keeps the SD card's frost-night writes down (bench/storage.py)."""
        sigs = {d.block: decision_signature(d) for d in ev.decisions}
        if reason != PROMPT_REASON or ev.alerts or sigs != self._stored_signatures:
            self._stored_signatures = sigs
            return True
        return False

    def readings_committed(self, readings) -> None:
        """The ingest writer has just committed these readings: tonight's cache takes them."""
        self.cache.push(readings)

    def wants_prompt_evaluation(self, readings, now: dt.datetime) -> bool:
        """A new crop-height air temperature near a block's trigger, in the watch window, may
        change that block's state: evaluate soon (the caller debounces)."""
        if not self.in_watch_window(now):
            return False
        for r in readings:
            if r.quantity not in ("air_temperature", "wet_bulb_temperature"):
                continue
            st = self.cfg.station(r.station)
            if st is None or st.role != "crop" or st.block is None:
                continue
            b = self.cfg.block(st.block)
            if r.value <= b.kill_10pct_c + b.margin_c + self.s.risk_band_c:
                return True
        return False

    # -- daily jobs ----------------------------------------------------------------------------
    def daily_due(self, now: dt.datetime) -> list[tuple[str, Night]]:
        night = self.evaluator.night_at(now)
        out = []
        jobs = {
            "dusk": night.dusk_utc,
            "morning": night.sunrise_utc + dt.timedelta(hours=1),
            "housekeeping": night.sunrise_utc + dt.timedelta(hours=2),
        }
        # the morning and housekeeping jobs belong to the night that is ending: before local
        # noon night_at(now) is that night
        for name, at in jobs.items():
            if now >= at and self.store.get_meta(DONE_META + name) != night.date.isoformat():
                out.append((name, night))
        return out

    def daily(self, now: dt.datetime) -> None:
        now = now.astimezone(dt.UTC)
        for name, night in self.daily_due(now):
            try:
                getattr(self, f"job_{name}")(now, night)
            finally:
                # recorded even when it failed, so a broken job is not retried every tick;
                # the failure itself is recorded as an event by the caller's guard
                self.store.set_meta(DONE_META + name, night.date.isoformat())
                self.job_runs[name] = self.job_runs.get(name, 0) + 1
                self.job_log.append((name, night.date, now))

    def job_dusk(self, now: dt.datetime, night: Night) -> None:
        """The dusk briefing: an evaluation at sunset + 2 h gives each block's outlook (the alert
        rules issue it once a night); then the "armed for tonight" check of the whole alert path,
        whose one message (armed, or degraded and what is wrong) goes through the outbox."""
        try:
            self.evaluate(now, "dusk briefing")
        finally:
            self.armed(now)

    def armed(self, now: dt.datetime) -> bool | None:
        """frostwatch.alerts.armed.armed_check once; a failure is recorded, never fatal."""
        from frostwatch.alerts.armed import armed_check

        if not hasattr(self.outbox, "ac"):
            return None  # an outbox without alert config (benchmarks, unit tests)
        try:
            ok, problems = armed_check(self.store, self.cfg, self.outbox, now)
        except Exception as exc:  # noqa: BLE001
            log.exception("the armed-for-tonight check failed")
            try:
                self.store.add_event(now, "daemon", "armed check failed", f"{type(exc).__name__}: {exc}")
            except Exception:  # noqa: BLE001
                log.exception("could not record the failed armed check")
            return None
        return ok

    def job_morning(self, now: dt.datetime, night: Night) -> None:
        """Learn the night just ended (walk-forward calibration), then write its report."""
        series = self.store.readings_window(night.sunset_utc - LOOKBACK, night.sunrise_utc + dt.timedelta(hours=1))
        with self.eval_lock:
            self.evaluator.learn_night(night, series)
        # drawn by a short-lived child: matplotlib's memory leaves with it (the daemon stays small)
        from frostwatch.reports.child import write_night_report_in_child

        try:
            path = write_night_report_in_child(self.cfg, night.date, self.s.report_dir)
            log.info("night report for %s written: %s", night.date, path)
            self.store.add_event(now, "daemon", "report", str(path))
        except UsageError as exc:
            log.info("no night report for %s: %s", night.date, exc)

    def job_housekeeping(self, now: dt.datetime, night: Night) -> None:
        """Retention (readings older than storage.retention_days, rejections older than
        storage.rejection_retention_days, decisions older than storage.decisions_days) and a WAL
        checkpoint."""
        removed = maintenance.remove_old_rows(
            self.store,
            now - dt.timedelta(days=self.cfg.storage.retention_days),
            now - dt.timedelta(days=self.cfg.storage.rejection_retention_days),
        )
        stored_decisions.delete_before(self.store, now - dt.timedelta(days=self.cfg.storage.decisions_days))
        maintenance.checkpoint(self.store, "TRUNCATE")
        log.info("housekeeping: %d old readings removed, WAL checkpointed", removed)

    def learn_history(self, now: dt.datetime) -> int:
        """Learn the past nights in the store, oldest first, as replay does (walk-forward)."""
        n = 0
        today = self.evaluator.night_at(now).date
        for k in range(self.s.learn_nights, 0, -1):
            night = self.evaluator.night(today - dt.timedelta(days=k))
            end = night.sunrise_utc + dt.timedelta(hours=1)
            if end > now:
                continue
            series = self.store.readings_window(night.sunset_utc - LOOKBACK, end)
            if series:
                with self.eval_lock:
                    n += len(self.evaluator.learn_night(night, series))
        # tonight's night has already ended if we start after its morning: learn it too
        night = self.evaluator.night(today)
        if now >= night.sunrise_utc + dt.timedelta(hours=1):
            series = self.store.readings_window(night.sunset_utc - LOOKBACK, night.sunrise_utc + dt.timedelta(hours=1))
            if series:
                with self.eval_lock:
                    n += len(self.evaluator.learn_night(night, series))
        return n

    # -- health --------------------------------------------------------------------------------
    def _restore_health(self) -> None:
        """The health problems open when the last run stopped: a restart continues each incident
        (a sensor silent since 01:12 stays one incident from 01:12, recorded and alerted once)
        instead of raising it again as new. A problem that cleared while the daemon was down is
        cleared, once, at the first check."""
        try:
            text = daemon_state.health_problems(self.store)
            if text:
                self.health_active = health.problems_from_json(text, {s.id for s in self.cfg.stations})
        except Exception:  # noqa: BLE001 - the checks then start afresh, as before
            log.exception("could not read the stored health problems; the health checks start afresh")

    def _save_health(self) -> None:
        try:
            daemon_state.save_health_problems(self.store, health.problems_to_json(self.health_active))
        except Exception:  # noqa: BLE001 - the next raise or clear tries again
            log.exception("could not store the open health problems")

    def check_health(self, now: dt.datetime, out_of_range: dict[str, int], extra: list[health.Problem] = (),
                     heard_s: dict[str, float] | None = None, judge_silence: bool = True,
                     rejected: dict[str, tuple[float, str]] | None = None) -> list[health.Problem]:
        """Raise and clear health problems. `heard_s` (station -> receipt time of its latest valid
        reading, stored or not) and `judge_silence=False` (the store cannot take readings, so
        silence cannot be judged; problems already raised stay as they are) keep a store failure
        from being blamed on sensors. `rejected`: station -> (epoch s, why) of its latest rejected
        message, named in a silent station's problem."""
        # 90 min: the stuck rule looks back an hour; a station silent for longer than the window
        # is still reported silent ("no reading in the window"). A longer window only costs
        # memory at high reading rates (bench/ingest.py).
        series = self.store.readings_window(now - dt.timedelta(minutes=90), now)
        report = health.assess(self.cfg, series, now.timestamp(), out_of_range, self.rules, heard_s, judge_silence,
                               rejected)
        held = () if judge_silence else tuple(p for k, p in self.health_active.items() if k.endswith(":silent"))
        if self.last_eval_utc is None:  # no evaluation yet in this run: a verdict restored from the last run stands
            doubted = tuple(p for k, p in self.health_active.items() if k.endswith(":implausible"))
        else:  # the last evaluation's own verdict (forecast.crosscheck), never a second opinion
            doubted = tuple(health.doubt_problems(self.doubts, self.evaluator.display))
        report = health.HealthReport(report.problems + doubted + tuple(extra) + held, report.healthy_stations)
        raised, cleared, self.health_active = health.transitions(self.health_active, report)
        for p in raised:
            self.outbox.submit_health(p.subject, p.detail, now, urgent=p.urgent)
        for p in cleared:
            self.outbox.submit_health(p.subject, f"recovered ({p.detail.split(';')[0]} no longer)", now)
        if raised or cleared:  # after the alerts are queued: a stored problem always has its alert
            self._save_health()
        return raised

