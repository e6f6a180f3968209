"""The running daemon: its threads (MQTT ingest, scheduler, outbox worker), signals, the systemd
watchdog and the heartbeat. It wires the parts together and owns the clock; it decides nothing
itself (frostwatch.daemon.core does, by calling the pure modules).
"""

from __future__ import annotations

import datetime as dt
import json
import logging
import os
import signal
import threading
import time
from collections.abc import Callable

from frostwatch import health, sdnotify
from frostwatch.config import Config
from frostwatch.daemon.core import PROMPT_REASON, Core, _utc_now, commit_urgently
from frostwatch.daemon.journal import _io_counters, dump_stacks, setup_logging
from frostwatch.daemon.scheduler import build_scheduler
from frostwatch.daemon_settings import daemon_settings
from frostwatch.status.document import HEARTBEAT_META
from frostwatch.store import Store, maintenance
from frostwatch.store.maintenance import tune_store

log = logging.getLogger("frostwatch.daemon")

CLOCK_JUMP_S = 30.0  # wall clock against monotonic clock, per supervision round (about 1 s)


def _iso(t: dt.datetime | None) -> str | None:
    return None if t is None else t.isoformat().replace("+00:00", "Z")


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
            # the same problems as their alerts word them ("upper-tower: silent for 12 min (...)")
            "health_details": [f"{p.subject}: {p.detail}" for _, p in sorted(self.core.health_active.items())],
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
                               judge_silence=self.ingest.failing_since is None,
                               rejected=dict(self.ingest.last_rejection))
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
        # what was wrong while it ran; stopping the threads below is no problem of its own (the
        # last heartbeat said "the writer thread is dead" after every clean stop)
        problems = self.problems()
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
            doc["problems"] = problems
            self.store.set_meta(HEARTBEAT_META, json.dumps(doc))
            self.store.add_event(self.clock(), "daemon", "stop", f"stored {self.ingest.stats.stored} readings this run")
            maintenance.checkpoint(self.store, "PASSIVE")
        except Exception:  # noqa: BLE001
            log.exception("final store write")
        self.store.close()
        log.info("stopped (%s)", _io_counters())
        return 0


def run(cfg: Config) -> int:
    setup_logging()
    return Daemon(cfg).run()
