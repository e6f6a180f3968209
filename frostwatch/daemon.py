"""`frostwatch run`: the unattended daemon. Wiring only: the scheduler, the MQTT client, the
outbox worker, signals and the systemd watchdog. Everything it decides is decided by the pure
modules it calls (pipeline, health); it owns the clock.

Threads: paho's network thread and the ingest writer (frostwatch.ingest.mqtt), APScheduler's
worker pool (evaluations, daily jobs, health, heartbeat), the outbox worker, and the main thread,
which supervises and pings the watchdog only while ingest, scheduler, outbox and store are healthy.

Scheduling (reliability.md 4): one IntervalTrigger tick at the night cadence (no cron at a local
hour, so both DST nights keep their cadence); by day the tick evaluates only every
`day_interval_min`. Daily jobs (the dusk briefing at sunset + 2 h, the morning job at sunrise +
1 h, housekeeping) are due at instants computed from the night and guarded by a per-night record
in the store, so each runs once per night whatever the clock does. misfire_grace_time None,
coalesce, max_instances 1; a failing job is recorded and never fatal.
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import os
import signal
import sys
import threading
import time
import traceback
from collections.abc import Callable

from frostwatch import health, sdnotify
from frostwatch import reload as config_reload
from frostwatch.config import Config

# [daemon] is validated in frostwatch.daemon_settings, so load_config need not import this module
from frostwatch.daemon_settings import _DAEMON_KEYS, DaemonSettings, daemon_settings  # noqa: F401 - re-exported
from frostwatch.decision import decision_signature
from frostwatch.errors import UsageError
from frostwatch.night import Night
from frostwatch.nightcache import NightCache
from frostwatch.pipeline import LOOKBACK, Evaluator
from frostwatch.status import HEARTBEAT_META, Liveness, decision_json
from frostwatch.store import Store, daemon_state, maintenance
from frostwatch.store import decisions as stored_decisions
from frostwatch.store.maintenance import (  # noqa: F401 - re-exported (bench/storage.py, tests)
    WAL_AUTOCHECKPOINT_BYTES,
    WAL_AUTOCHECKPOINT_PAGES,
    WAL_SIZE_LIMIT_BYTES,
    tune_store,
    wal_autocheckpoint_pages,
)

log = logging.getLogger("frostwatch.daemon")

CLOCK_JUMP_S = 30.0  # wall clock against monotonic clock, per supervision round (about 1 s)
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
            series = self.cache.series(now)
            ev = self.evaluator.evaluate(now, series)
            stored = self._worth_storing(ev, reason)
            # projections and decisions first (one transaction, one fsync per evaluation), then
            # the alerts written from them: a stored alert always has its decision beside it
            try:
                if stored:
                    daemon_state.save_evaluation(self.store, ev.projections, {}, ev.decisions)
            finally:
                if ev.alerts:
                    self.outbox.submit(ev.alerts, now)
            self.last_eval_utc = now
            self.evaluations += 1
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
    def check_health(self, now: dt.datetime, out_of_range: dict[str, int], extra: list[health.Problem] = (),
                     heard_s: dict[str, float] | None = None, judge_silence: bool = True) -> list[health.Problem]:
        """Raise and clear health problems. `heard_s` (station -> receipt time of its latest valid
        reading, stored or not) and `judge_silence=False` (the store cannot take readings, so
        silence cannot be judged; problems already raised stay as they are) keep a store failure
        from being blamed on sensors."""
        # 90 min: the stuck rule looks back an hour; a station silent for longer than the window
        # is still reported silent ("no reading in the window"). A longer window only costs
        # memory at high reading rates (bench/ingest.py).
        series = self.store.readings_window(now - dt.timedelta(minutes=90), now)
        report = health.assess(self.cfg, series, now.timestamp(), out_of_range, self.rules, heard_s, judge_silence)
        held = () if judge_silence else tuple(p for k, p in self.health_active.items() if k.endswith(":silent"))
        report = health.HealthReport(report.problems + tuple(extra) + held, report.healthy_stations)
        raised, cleared, self.health_active = health.transitions(self.health_active, report)
        for p in raised:
            self.outbox.submit_health(p.subject, p.detail, now, urgent=p.urgent)
        for p in cleared:
            self.outbox.submit_health(p.subject, f"recovered ({p.detail.split(';')[0]} no longer)", now)
        return raised


def _r(x: float | None) -> float | None:
    return None if x is None else round(x, 2)


def _iso(t: dt.datetime | None) -> str | None:
    return None if t is None else t.isoformat().replace("+00:00", "Z")


# ---- the process -----------------------------------------------------------------------------


def build_scheduler(cfg: Config, s: DaemonSettings, jobs: dict[str, Callable[[], None]], start_utc: dt.datetime):
    """A BackgroundScheduler with an explicit time zone and IntervalTriggers only (DST-proof).
    `jobs` maps "tick", "heartbeat" and "health" to callables."""
    from apscheduler.schedulers.background import BackgroundScheduler
    from apscheduler.triggers.interval import IntervalTrigger

    tz = cfg.site.tz
    sched = BackgroundScheduler(
        timezone=tz,
        job_defaults={"misfire_grace_time": None, "coalesce": True, "max_instances": 1},
        executors={"default": {"type": "threadpool", "max_workers": 4}},
    )
    step = s.night_interval_min * 60.0
    first_tick = dt.datetime.fromtimestamp((int(start_utc.timestamp() // step) + 1) * step, tz=dt.UTC)
    sched.add_job(jobs["tick"], IntervalTrigger(seconds=step, start_date=first_tick, timezone=tz), id="tick", replace_existing=True)
    sched.add_job(jobs["heartbeat"], IntervalTrigger(seconds=s.heartbeat_s, timezone=tz), id="heartbeat", replace_existing=True)
    sched.add_job(jobs["health"], IntervalTrigger(seconds=s.health_interval_s, timezone=tz), id="health", replace_existing=True)
    return sched


class Daemon:
    def __init__(self, cfg: Config, clock: Callable[[], dt.datetime] = _utc_now):
        from frostwatch import native_memory
        from frostwatch.alerts.outbox import Outbox
        from frostwatch.fleet.settings import fleet_settings
        from frostwatch.fleet.site import SiteTopics
        from frostwatch.ingest.mqtt import IngestSettings, MqttIngest, mappings_from_config

        native_memory.limit_arenas(2)  # before any thread: see frostwatch/native_memory.py
        self.cfg = cfg
        self.s = daemon_settings(cfg)
        mappings = mappings_from_config(cfg)
        self.clock = clock
        self.store = Store.open(cfg.storage.path)
        tune_store(self.store)
        self.outbox = Outbox(self.store, cfg)
        self.core = Core(cfg, self.s, self.store, self.outbox, clock)
        self.ingest = MqttIngest(
            cfg, self.store,
            IngestSettings(
                batch_rows=self.s.batch_rows, batch_delay_s=self.s.batch_delay_s, queue_max=self.s.queue_max,
                session_expiry_s=self.s.session_expiry_s, status_topic=self.s.status_topic,
                heartbeat_s=self.s.heartbeat_s, max_future_s=self.s.max_future_s,
                ack_topic=self.outbox.ac.ack_topic, urgent_delay_s=self.s.urgent_delay_s,
                ignore_prefix=SiteTopics(cfg.broker.prefix, cfg.site.id).root + "/",

                store_stall_s=self.s.store_stall_s,
            ),
            mappings, on_committed=self._on_committed, clock=clock, on_ack=self._on_ack,
            urgent=self._urgent,
        )
        self.core.publish = self.ingest.publish_json
        # this site's state for a fleet view: its own connection and will (frostwatch.fleet.uplink)
        self.fleet = fleet_settings(cfg)
        self.uplink = None
        if self.fleet.publish:
            from frostwatch.fleet.uplink import SiteUplink

            self.uplink = SiteUplink(cfg, self.fleet)
            self.core.on_evaluated = self._publish_site_state
        self.stop_event = threading.Event()
        self.reload_requested = threading.Event()
        self.started_utc = clock()
        self.last_beat = time.monotonic()
        self._last_beat_stored = -1e9
        self.last_outbox = time.monotonic()
        self.store_ok = True
        self.store_reason = ""
        self._wall_mono = (time.time(), time.monotonic())
        self._soon_lock = threading.Lock()
        self._last_prompt = 0.0
        self.sched = None

    # -- jobs (each guarded: a failure is recorded, never fatal) --------------------------------
    def _guard(self, name: str, fn: Callable[[], None]) -> Callable[[], None]:
        def run() -> None:
            try:
                fn()
            except Exception as exc:  # noqa: BLE001
                from frostwatch.store.db import damaged_message, is_damage

                if is_damage(exc):  # one clear line, not a traceback every round
                    log.error("job %s failed: %s", name, damaged_message(self.store.path, exc))
                else:
                    log.exception("job %s failed (recorded; the daemon carries on)", name)
                try:
                    self.store.add_event(self.clock(), "daemon", f"job {name} failed", f"{type(exc).__name__}: {exc}")
                except Exception:  # noqa: BLE001
                    log.exception("could not record the failure of job %s", name)

        run.__name__ = name
        return run

    def _heartbeat(self) -> None:
        self.last_beat = time.monotonic()
        self.ingest.heartbeat()
        doc = self.heartbeat_doc()
        if time.monotonic() - self._last_beat_stored >= self.s.heartbeat_store_s - 0.5:
            try:
                self.store.set_meta(HEARTBEAT_META, json.dumps(doc))
                self.store_ok = True
                self._last_beat_stored = time.monotonic()
            except Exception as exc:  # noqa: BLE001
                from frostwatch.store.db import store_failure

                self.store_ok = False
                self.store_reason = store_failure(exc) or f"{type(exc).__name__}: {exc}"
                log.error("the store cannot be written: %s", self.store_reason)
        self.ingest.publish_json("daemon", doc)
        if self.uplink is not None:
            health_now = sorted(self.core.health_active.values(), key=lambda p: (not p.urgent, p.key))
            self.uplink.beat(self.clock(), doc["problems"] + [f"{p.subject}: {p.detail}" for p in health_now])
        sdnotify.notify(f"STATUS=readings {self.ingest.stats.stored}, rejected {self.ingest.stats.rejected}, "
                        f"broker {'up' if self.ingest.connected else 'DOWN'}, last evaluation {_iso(self.core.last_eval_utc)}")

    # -- clock jumps (reliability.md finding 14, 4.2) --------------------------------------------
    def check_clock(self) -> float:
        """Compare the wall clock with the monotonic clock since the last call (the supervision
        loop calls this every second). On a jump of more than CLOCK_JUMP_S either way: every
        scheduler job is rescheduled to run now (APScheduler 3.x keeps next run times in wall
        time, so after a step back it would run nothing until the clock caught up), and a
        "clock" health event is raised. Returns the jump in seconds (0 when none)."""
        wall, mono = time.time(), time.monotonic()
        w0, m0 = self._wall_mono
        self._wall_mono = (wall, mono)
        jump = (wall - w0) - (mono - m0)
        if abs(jump) <= CLOCK_JUMP_S:
            return 0.0
        n = self.reschedule_all()
        log.warning("the wall clock jumped by %+.0f s; %d scheduler jobs rescheduled to run now", jump, n)
        try:
            self.outbox.submit_health(
                "clock", f"the system clock jumped by {jump:+.0f} s; every scheduled job was rescheduled to run now; "
                         "check time sync (NTP)", self.clock())
        except Exception:  # noqa: BLE001 - the jump is handled; only its notice failed
            log.exception("could not record the clock jump")
        return jump

    def reschedule_all(self) -> int:
        """Every job's next run time := now (then each interval job keeps its interval from now)."""
        if self.sched is None:
            return 0
        now = dt.datetime.now(self.cfg.site.tz)
        n = 0
        for job in self.sched.get_jobs():
            try:
                job.modify(next_run_time=now)
                n += 1
            except Exception:  # noqa: BLE001 - a job removed meanwhile (evaluate-soon ran)
                log.debug("could not reschedule job %s", job.id, exc_info=True)
        self.sched.wakeup()
        return n

    def _scheduler_event(self, e) -> None:
        """A missed, skipped (still running: an overrun) or failed job: logged and recorded in the
        store's events (kind "daemon"), so an overrunning evaluation is on record."""
        from apscheduler.events import EVENT_JOB_MAX_INSTANCES, EVENT_JOB_MISSED

        what = {EVENT_JOB_MISSED: "missed", EVENT_JOB_MAX_INSTANCES: "skipped (still running)"}.get(e.code, "failed")
        log.warning("scheduler: job %s %s", e.job_id, what)
        try:
            due = getattr(e, "scheduled_run_time", None)
            detail = f"scheduled for {_iso(due.astimezone(dt.UTC)) if due else '?'}"
            if e.code == EVENT_JOB_MAX_INSTANCES:
                detail += "; the previous run was still going (an overrun), so this run was coalesced into the next"
            self.store.add_event(self.clock(), "daemon", f"job {e.job_id} {what}", detail)
        except Exception:  # noqa: BLE001 - a listener must never raise into the scheduler
            log.exception("could not record the scheduler event")

    def heartbeat_doc(self) -> dict:
        st = self.ingest.stats
        return {
            "time": _iso(self.clock()), "pid": os.getpid(), "started": _iso(self.started_utc),
            "broker_connected": self.ingest.connected, "broker_down_s": round(self.ingest.broker_down_s(), 1),
            "queue": self.ingest.q.qsize(), "ingest": st.as_dict(),
            "evaluations": self.core.evaluations, "last_evaluation": _iso(self.core.last_eval_utc),
            "health_problems": sorted(self.core.health_active),
            "stored_every_s": self.s.heartbeat_store_s, "heartbeat_s": self.s.heartbeat_s,
            "problems": self.problems(),
        }

    def _health(self) -> None:
        extra = []
        down = self.ingest.broker_down_s()
        if down >= self.s.broker_down_alert_s:
            extra.append(health.Problem("broker:down", "broker", f"no connection to the MQTT broker at {self.cfg.broker.host}:{self.cfg.broker.port} for {down:.0f} s", urgent=self.core.in_watch_window(self.clock())))
        stalled = self.ingest.not_storing_s()
        if stalled >= self.s.store_stall_s:
            extra.append(health.Problem(
                "store:not-storing", "store",
                f"readings are not being stored: {self.ingest.failure_reason or 'a commit has not returned'} "
                f"(store {self.store.path}); the sensors are reporting and their readings wait in the broker "
                "until it is fixed", urgent=self.core.in_watch_window(self.clock())))
        self.core.check_health(self.clock(), self.ingest.recent_out_of_range(), extra, dict(self.ingest.heard),
                               judge_silence=self.ingest.failing_since is None)
        from frostwatch import native_memory

        native_memory.trim()  # the check's transient arrays are freed: give the pages back

    def _publish_site_state(self, now: dt.datetime, blocks: dict) -> None:
        """After each evaluation: the blocks' states to the fleet publisher (never raises)."""
        from frostwatch.fleet.uplink import acknowledged_by_block, states_from_status_docs

        try:
            acked = acknowledged_by_block(self.store, now - dt.timedelta(hours=18), now)
            self.uplink.evaluated(states_from_status_docs(blocks, acked))
        except Exception:  # noqa: BLE001 - the fleet view must never disturb the site's own work
            log.exception("could not publish the site state for the fleet view (the daemon carries on)")

    def _on_ack(self, payload: bytes, received_utc: dt.datetime) -> None:
        from frostwatch.alerts.acks import acknowledge_mqtt

        acknowledge_mqtt(self.store, self.cfg, self.outbox, payload, received_utc)

    def _urgent(self, readings) -> bool:
        """The ingest writer's question: commit these readings within urgent_delay_s?"""
        return commit_urgently(self.core, readings, self.clock(), time.monotonic() - self._last_prompt, self.s.debounce_s)

    def _on_committed(self, readings) -> None:
        self.core.readings_committed(readings)
        now = self.clock()
        if not self.core.wants_prompt_evaluation(readings, now):
            return
        with self._soon_lock:
            mono = time.monotonic()
            if mono - self._last_prompt < self.s.debounce_s or self.sched is None:
                return
            self._last_prompt = mono
        from apscheduler.triggers.date import DateTrigger

        self.sched.add_job(
            self._guard("evaluate-soon", lambda: self.core.evaluate(self.clock(), PROMPT_REASON)),
            DateTrigger(run_date=dt.datetime.now(dt.UTC)), id="evaluate-soon", replace_existing=True,
        )

    def _outbox_main(self) -> None:
        while not self.stop_event.is_set():
            self.last_outbox = time.monotonic()
            self.outbox.due_event.clear()
            try:
                self.outbox.deliver_due(self.clock())
            except Exception:  # noqa: BLE001
                log.exception("outbox delivery round failed (carrying on)")
            # a new alert wakes the round at once; stop() sets the event too
            self.outbox.due_event.wait(self.s.outbox_interval_s)

    # -- supervision ---------------------------------------------------------------------------
    def problems(self) -> list[str]:
        out = list(self.ingest.problems())
        now = time.monotonic()
        if now - self.last_beat > 3 * self.s.heartbeat_s + 10:
            out.append(f"the scheduler heartbeat is {now - self.last_beat:.0f} s old")
        if now - self.last_outbox > 3 * self.s.outbox_interval_s + 60:
            out.append(f"the outbox worker has not looped for {now - self.last_outbox:.0f} s")
        if not self.store_ok:
            out.append(f"the store cannot be written ({self.store_reason})")
        return out

    def request_stop(self) -> None:
        self.stop_event.set()
        self.outbox.due_event.set()

    def _signals(self) -> None:
        signal.signal(signal.SIGTERM, lambda *_: self.request_stop())
        signal.signal(signal.SIGINT, lambda *_: self.request_stop())
        signal.signal(signal.SIGUSR1, lambda *_: dump_stacks())
        # SIGHUP (systemctl reload frostwatch): reload the config's block keys and evaluate now
        signal.signal(signal.SIGHUP, lambda *_: self.reload_requested.set())

    def _reload_now(self) -> None:
        self.core.reload_config(self.clock(), force=True)
        self.core.evaluate(reason="reload")

    def run(self) -> int:
        self._signals()
        now = self.clock()
        learned = self.core.learn_history(now)
        log.info("frostwatch daemon starting: store %s, %d past night records learned", self.store.path, learned)
        self.store.add_event(now, "daemon", "start", f"pid {os.getpid()}")
        self.ingest.start()
        if self.uplink is not None:
            self.uplink.start()
        self.sched = build_scheduler(self.cfg, self.s, {
            "tick": self._guard("tick", self.core.tick),
            "heartbeat": self._guard("heartbeat", self._heartbeat),
            "health": self._guard("health", self._health),
        }, now)
        from apscheduler.events import EVENT_JOB_ERROR, EVENT_JOB_MAX_INSTANCES, EVENT_JOB_MISSED

        self.sched.add_listener(self._scheduler_event, EVENT_JOB_MISSED | EVENT_JOB_MAX_INSTANCES | EVENT_JOB_ERROR)
        self.sched.start()
        self.sched.add_job(self._guard("tick", self.core.tick), id="first-evaluation")
        outbox = threading.Thread(target=self._outbox_main, name="frostwatch-outbox", daemon=True)
        outbox.start()
        self._heartbeat()
        sdnotify.notify("READY=1")
        wd = sdnotify.watchdog_interval_s()
        last_ping = 0.0
        reported: tuple = ()
        self._wall_mono = (time.time(), time.monotonic())
        prompt_health = -1e9
        while not self.stop_event.wait(1.0):
            if self.reload_requested.is_set():
                self.reload_requested.clear()
                self.sched.add_job(self._guard("reload", self._reload_now))
            try:
                self.check_clock()
            except Exception:  # noqa: BLE001 - supervision carries on
                log.exception("clock check failed")
            if (self.ingest.not_storing_s() >= self.s.store_stall_s
                    and "store:not-storing" not in self.core.health_active
                    and time.monotonic() - prompt_health >= self.s.store_stall_s):
                # raise "readings are not being stored" now, not at the next health round: the
                # watchdog is withheld from this moment and systemd may restart us before then
                prompt_health = time.monotonic()
                self._guard("health", self._health)()
            probs = self.problems()
            if tuple(probs) != reported:
                for p in probs:
                    log.error("unhealthy: %s", p)
                reported = tuple(probs)
            if wd and not probs and time.monotonic() - last_ping >= wd:
                sdnotify.notify("WATCHDOG=1")
                last_ping = time.monotonic()
        return self.shutdown()

    def shutdown(self) -> int:
        sdnotify.notify("STOPPING=1")
        log.info("stopping: flushing readings, acknowledging, closing")
        if self.sched:
            try:
                self.sched.shutdown(wait=True)
            except Exception:  # noqa: BLE001
                log.exception("scheduler shutdown")
        self.ingest.stop()
        if self.uplink is not None:
            self.uplink.stop()
        try:
            doc = self.heartbeat_doc()
            doc["stopped"] = True
            self.store.set_meta(HEARTBEAT_META, json.dumps(doc))
            self.store.add_event(self.clock(), "daemon", "stop", f"stored {self.ingest.stats.stored} readings this run")
            maintenance.checkpoint(self.store, "PASSIVE")
        except Exception:  # noqa: BLE001
            log.exception("final store write")
        self.store.close()
        log.info("stopped (%s)", _io_counters())
        return 0


def _io_counters() -> str:
    """This process's bytes written to storage (Linux /proc/self/io), for the wear budget."""
    try:
        with open("/proc/self/io", encoding="ascii") as f:
            io = dict(line.split(": ") for line in f.read().splitlines())
        return f"io write_bytes {int(io['write_bytes'])}"
    except (OSError, KeyError, ValueError):
        return "io counters unavailable"


def dump_stacks() -> None:
    """SIGUSR1: every thread's stack to the log."""
    names = {t.ident: t.name for t in threading.enumerate()}
    for ident, frame in sys._current_frames().items():
        log.warning("thread %s (%s):\n%s", names.get(ident, "?"), ident, "".join(traceback.format_stack(frame)))


class _JournalFormatter(logging.Formatter):
    """A `<N>` syslog priority prefix when stderr goes to journald (reliability.md 5.2)."""

    PRI = {logging.DEBUG: 7, logging.INFO: 6, logging.WARNING: 4, logging.ERROR: 3, logging.CRITICAL: 2}

    def __init__(self, journal: bool):
        super().__init__("%(levelname)s %(name)s: %(message)s" if journal else "%(asctime)s %(levelname)s %(name)s: %(message)s")
        self.journal = journal

    def format(self, record: logging.LogRecord) -> str:
        s = super().format(record)
        return f"<{self.PRI.get(record.levelno, 6)}>{s}" if self.journal else s


def setup_logging() -> None:
    from frostwatch import redact

    h = logging.StreamHandler(sys.stderr)
    h.setFormatter(_JournalFormatter(bool(os.environ.get("JOURNAL_STREAM"))))
    redact.install(h)  # no URL query string (a webhook's api_key) reaches the journal, library lines included
    root = logging.getLogger()
    root.handlers[:] = [h]
    root.setLevel(os.environ.get("FROSTWATCH_LOG_LEVEL", "INFO").upper())
    logging.getLogger("apscheduler").setLevel(logging.WARNING)


def run(cfg: Config) -> int:
    setup_logging()
    return Daemon(cfg).run()
