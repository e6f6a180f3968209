"""Many farms, one view (issue 17): the fleet view at scale, and what one site sends up its link.

    python -m bench.fleet [--quick] [--sites 500] [--minutes 10]      (or: python -m bench fleet)

1. scale: 500 simulated sites of 5 blocks publish through one real Mosquitto, each site every
   2 minutes (every state changes every time: the worst case) and a heartbeat a minute, over
   20 publisher connections. `frostwatch fleet --serve` runs as its own process; its RSS and CPU
   come from /proc. A probe publishes one changed state at a time and polls the page's
   `/fleet.json?site=ID` every 50 ms until the change shows: change published -> visible.
   Floors, same run: a bare paho subscriber receiving the same probe; a bare interpreter with
   paho, json and http.server imported. Last, `frostwatch fleet --json` gathers all 500 sites
   and every block's level is checked against what the sites last sent.
   Targets (the issue): visible within 5 s, under 150 MB.
2. uplink: one site's traffic to the centre for 24 hours (noon to noon) over the demo farm's
   radiation-frost night and its cloudy night. The daemon's real evaluation (`daemon.Core`,
   stepped clock: every 2 min in the watch window, every 15 min by day) feeds the real fleet
   publisher (`SiteUplink`, stepped monotonic clock) on a real site broker, bridged with
   deploy/mosquitto/bridge-fleet.conf over TLS to a real central broker through a counting TCP
   proxy: bytes both ways, TLS included. TCP/IP headers are estimated at 52 bytes for each chunk
   the proxy relayed (one segment each; ACK-only segments not counted). Messages are paced 5 ms
   apart so they are not coalesced. Then the proxy refuses the bridge for 20 s: the bytes
   flushed after it, divided by the bridge's reconnection attempts, are what one attempt costs
   (Mosquitto re-sends the retained states each time; deploy/README.md).

Writes bench/results/fleet.json; `run(verbose=True, quick=False) -> dict` for `python -m bench`.
"""

from __future__ import annotations

import datetime as dt
import getpass
import json
import os
import random
import shutil
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.request
from importlib import resources
from pathlib import Path

import paho.mqtt.client as paho

from frostwatch.fleet import site as fs

RESULTS = Path(__file__).resolve().parent / "results"
REPO = Path(__file__).resolve().parent.parent
TARGET_VISIBLE_S = 5.0
TARGET_RSS_MB = 150.0
LEVELS = [("rest", 0), ("wait", 2), ("ready", 3), ("protect", 4), ("all-hands", 5)]
TCPIP_HEADER_B = 52  # IPv4 20 + TCP 20 + timestamps 12, per segment (an estimate: ACK-only segments not counted)


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Broker:
    """A foreground Mosquitto on a free loopback port, run as the current user."""

    def __init__(self, work: Path, extra: str = "", certs: Path | None = None):
        self.work = work
        self.port = free_port()
        (work / "data").mkdir(parents=True, exist_ok=True)
        self.conf = work / "mosquitto.conf"
        tls = (f"certfile {certs / 'server.crt'}\nkeyfile {certs / 'server.key'}\ntls_version tlsv1.2\n"
               if certs else "")
        self.conf.write_text(
            f"user {getpass.getuser()}\nlistener {self.port} 127.0.0.1\n{tls}"
            + "allow_anonymous true\npersistence true\n"
            f"persistence_location {work / 'data'}/\nautosave_interval 30\nmax_queued_messages 1000000\n"
            f"max_inflight_messages 200\nlog_dest file {work / 'mosquitto.log'}\n" + extra)
        self.proc: subprocess.Popen | None = None

    def start(self) -> None:
        exe = shutil.which("mosquitto") or "/usr/sbin/mosquitto"
        self.proc = subprocess.Popen([exe, "-c", str(self.conf)], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        deadline = time.monotonic() + 10
        while time.monotonic() < deadline:
            try:
                with socket.create_connection(("127.0.0.1", self.port), timeout=0.2):
                    return
            except OSError:
                if self.proc.poll() is not None:
                    raise RuntimeError(f"mosquitto exited: {self.proc.stderr.read().decode(errors='replace')}") from None
                time.sleep(0.05)
        raise RuntimeError(f"mosquitto did not listen on {self.port}")

    def stop(self) -> None:
        if self.proc and self.proc.poll() is None:
            self.proc.terminate()
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(10)


def proc_status_kib(pid: int, key: str) -> int:
    with open(f"/proc/{pid}/status") as f:
        for line in f:
            if line.startswith(key + ":"):
                return int(line.split()[1])
    return 0


def proc_cpu_s(pid: int) -> float:
    with open(f"/proc/{pid}/stat") as f:
        fields = f.read().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


# ---- 1. the fleet view at scale ----------------------------------------------------------------


class Fleet:
    """`n` simulated sites over `conns` publisher connections; remembers what each block last said."""

    def __init__(self, port: int, n: int, blocks: int, conns: int = 20):
        self.n, self.blocks = n, blocks
        self.sites = [f"site-{i:04d}" for i in range(n)]
        self.clients = []
        for k in range(conns):
            c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id=f"bench-sites-{k}", protocol=paho.MQTTv5)
            c.max_inflight_messages_set(200)
            c.max_queued_messages_set(0)
            c.connect("127.0.0.1", port, keepalive=30)
            c.loop_start()
            self.clients.append(c)
        self.latest: dict[tuple[str, str], tuple[str, int]] = {}
        self.lock = threading.Lock()
        self.sent = 0

    def client(self, i: int) -> paho.Client:
        return self.clients[i % len(self.clients)]

    def publish_states(self, i: int, cycle: int, action: str | None = None, only_block: int | None = None) -> list:
        site, now = self.sites[i], dt.datetime.now(dt.UTC)
        out = []
        for k in range(self.blocks):
            if only_block is not None and k != only_block:
                continue
            level, rank = LEVELS[(i + k + cycle) % len(LEVELS)]
            b = {"block": f"b{k}", "level": level, "rank": rank, "monitored": True, "as_of": now,
                 "predicted_min_c": 2.0 - rank + (cycle % 3) * 0.7, "band_c": 1.0,
                 "predicted_min_at": now + dt.timedelta(hours=3),
                 "t10_crossing_at": now + dt.timedelta(hours=2) if rank >= 3 else None,
                 "action": action or f"{level}: cycle {cycle}", "acknowledged": False if rank >= 3 else None}
            (t, p), = fs.state_messages("frostwatch", site, [b])
            with self.lock:
                self.latest[(site, b["block"])] = (level, rank)
                self.sent += 1
            out.append(self.client(i).publish(t, p, qos=1, retain=True))
        return out

    def publish_heartbeat(self, i: int) -> None:
        now = dt.datetime.now(dt.UTC)
        iso = fs.iso_utc(now)
        t, p = fs.heartbeat_message("frostwatch", self.sites[i], fs.heartbeat_doc(now, 60, iso, None))
        self.client(i).publish(t, p, qos=0, retain=True)
        self.sent += 1

    def publish_info(self, i: int) -> list:
        now = dt.datetime.now(dt.UTC)
        t, p = fs.info_message("frostwatch", fs.info_doc(self.sites[i], f"Site {i}", self.blocks, [], now))
        return [self.client(i).publish(t, p, qos=1, retain=True),
                self.client(i).publish(*fs.online_message("frostwatch", self.sites[i]), qos=1, retain=True)]

    def stop(self) -> None:
        for c in self.clients:
            c.disconnect()
            c.loop_stop()


class FloorSubscriber:
    """A bare paho subscriber: when each probe's action reaches a plain client."""

    def __init__(self, port: int):
        self.seen: dict[str, float] = {}
        self.c = paho.Client(paho.CallbackAPIVersion.VERSION2, client_id="bench-floor", protocol=paho.MQTTv5)
        self.c.on_message = self._on_message
        self.c.on_connect = lambda c, u, f, rc, p: c.subscribe("frostwatch/+/state/+", qos=0)
        self.c.connect("127.0.0.1", port, keepalive=30)
        self.c.loop_start()

    def _on_message(self, client, userdata, msg) -> None:
        if b'"probe ' in msg.payload:
            self.seen[json.loads(msg.payload)["action"]] = time.monotonic()

    def stop(self) -> None:
        self.c.disconnect()
        self.c.loop_stop()


FLOOR_RSS_CODE = """
import json, http.server, paho.mqtt.client
with open('/proc/self/status') as f:
    print(next(int(l.split()[1]) for l in f if l.startswith('VmRSS:')))
"""


def get_json(url: str, timeout: float = 10.0) -> dict:
    with urllib.request.urlopen(url, timeout=timeout) as r:
        return json.loads(r.read())


def bench_scale(work: Path, n_sites: int, minutes: float, probes: int, verbose: bool) -> dict:
    broker = Broker(work / "broker", extra="max_connections -1\n")
    broker.start()
    fleet = Fleet(broker.port, n_sites, 5)
    floor = FloorSubscriber(broker.port)
    view = None
    try:
        infos = []
        for i in range(n_sites):
            infos += fleet.publish_info(i) + fleet.publish_states(i, 0)
            fleet.publish_heartbeat(i)
        for x in infos:
            x.wait_for_publish(60)
        page_port = free_port()
        log = (work / "view.log").open("wb")
        t_start = time.monotonic()
        view = subprocess.Popen([sys.executable, "-m", "frostwatch", "fleet", "--broker", f"127.0.0.1:{broker.port}",
                                 "--serve", "--port", str(page_port), "--refresh-s", "30"],
                                stdout=log, stderr=subprocess.STDOUT, env=dict(os.environ, PYTHONUNBUFFERED="1"))
        base = f"http://127.0.0.1:{page_port}"
        while True:
            try:
                if len(get_json(f"{base}/fleet.json")["sites"]) == n_sites:
                    break
            except OSError:
                pass
            if time.monotonic() - t_start > 120 or view.poll() is not None:
                raise RuntimeError(f"the fleet view did not show {n_sites} sites: {(work / 'view.log').read_text()[-2000:]}")
            time.sleep(0.2)
        settle_s = time.monotonic() - t_start
        if verbose:
            print(f"  {n_sites} sites x 5 blocks retained; the view showed them all {settle_s:.1f} s after it started")

        # steady load: each site every 2 min (staggered), a heartbeat every 60 s, probes meanwhile
        period_s, hb_s = 120.0, 60.0
        stop = threading.Event()
        probing: set[int] = set()
        cycles = [1] * n_sites

        def drive() -> None:
            t0 = time.monotonic()
            events = sorted([(t0 + period_s * i / n_sites, "s", i) for i in range(n_sites)]
                            + [(t0 + hb_s * i / n_sites, "h", i) for i in range(n_sites)])
            import heapq

            heapq.heapify(events)
            while not stop.is_set() and events:
                at, kind, i = heapq.heappop(events)
                delay = at - time.monotonic()
                if delay > 0 and stop.wait(delay):
                    return
                if kind == "s":
                    if i not in probing:
                        fleet.publish_states(i, cycles[i])
                        cycles[i] += 1
                    heapq.heappush(events, (at + period_s, "s", i))
                else:
                    fleet.publish_heartbeat(i)
                    heapq.heappush(events, (at + hb_s, "h", i))

        driver = threading.Thread(target=drive, daemon=True)
        cpu0, wall0 = proc_cpu_s(view.pid), time.monotonic()
        driver.start()
        rss, lat, floor_lat = [], [], []
        duration = minutes * 60.0
        rng = random.Random(17)
        next_probe = wall0 + duration / (probes + 1)
        k = 0
        while time.monotonic() - wall0 < duration:
            rss.append(proc_status_kib(view.pid, "VmRSS"))
            if time.monotonic() >= next_probe and k < probes:
                i = rng.randrange(n_sites)
                probing.add(i)
                k += 1
                action = f"probe {k}"
                t_pub = time.monotonic()
                fleet.publish_states(i, cycles[i], action=action, only_block=0)
                url = f"{base}/fleet.json?site={fleet.sites[i]}"
                while time.monotonic() - t_pub < 30:
                    doc = get_json(url)
                    if any(b.get("action") == action for s in doc["sites"] for b in s["blocks"]):
                        lat.append(time.monotonic() - t_pub)
                        break
                    time.sleep(0.05)
                else:
                    lat.append(float("inf"))
                if action in floor.seen:
                    floor_lat.append(floor.seen[action] - t_pub)
                probing.discard(i)
                next_probe = wall0 + duration * (k + 1) / (probes + 1)
            time.sleep(1.0)
        cpu_s = proc_cpu_s(view.pid) - cpu0
        steady_s = time.monotonic() - wall0
        stop.set()
        driver.join(10)
        rss_hwm = proc_status_kib(view.pid, "VmHWM")

        # --json on the whole fleet: every site, every block's level as last sent
        time.sleep(2.0)
        t = time.monotonic()
        p = subprocess.run([sys.executable, "-m", "frostwatch", "fleet", "--broker", f"127.0.0.1:{broker.port}", "--json"],
                           capture_output=True, text=True, timeout=120)
        json_s = time.monotonic() - t
        doc = json.loads(p.stdout)
        wrong = [(s["site"], b["block"]) for s in doc["sites"] for b in s["blocks"]
                 if fleet.latest.get((s["site"], b["block"])) != (b["level"], b["rank"])]
        listed = len(doc["sites"])
        floor_rss = int(subprocess.run([sys.executable, "-c", FLOOR_RSS_CODE], capture_output=True, text=True,
                                       check=True, timeout=60).stdout)
    finally:
        if view is not None and view.poll() is None:
            view.terminate()
            try:
                view.wait(10)
            except subprocess.TimeoutExpired:
                view.kill()
                view.wait(10)
        floor.stop()
        fleet.stop()
        broker.stop()
    res = {
        "sites": n_sites, "blocks_per_site": 5, "period_s": period_s, "heartbeat_s": hb_s, "steady_s": round(steady_s, 1),
        "messages_sent": fleet.sent, "messages_per_s": round(fleet.sent / (steady_s + settle_s), 1),
        "view_settle_s": round(settle_s, 2),
        "visible_s": {"median": round(statistics.median(lat), 3), "p95": round(sorted(lat)[int(0.95 * (len(lat) - 1))], 3),
                      "max": round(max(lat), 3), "n": len(lat)},
        "floor_visible_s": {"median": round(statistics.median(floor_lat), 4) if floor_lat else None, "n": len(floor_lat)},
        "rss_mb_max": round(max(max(rss), rss_hwm) * 1024 / 1e6, 1), "rss_mb_end": round(rss[-1] * 1024 / 1e6, 1),
        "floor_rss_mb": round(floor_rss * 1024 / 1e6, 1),
        "cpu_pct_of_one_core": round(100.0 * cpu_s / steady_s, 1),
        "json_gather_s": round(json_s, 2), "json_sites_listed": listed, "json_blocks_wrong": len(wrong),
        "json_wrong_examples": wrong[:5],
    }
    if verbose:
        v = res["visible_s"]
        print(f"  change published -> visible: median {v['median']:.3f} s, p95 {v['p95']:.3f} s, max {v['max']:.3f} s "
              f"({v['n']} probes); bare subscriber {res['floor_visible_s']['median']} s")
        print(f"  view RSS max {res['rss_mb_max']} MB (floor {res['floor_rss_mb']} MB); CPU {res['cpu_pct_of_one_core']} % "
              f"of one core at {res['messages_per_s']} msg/s")
        print(f"  fleet --json: {listed} sites in {json_s:.1f} s, {len(wrong)} blocks with a wrong level")
    return res


# ---- 2. one site's uplink --------------------------------------------------------------------


class CountingProxy:
    """A TCP relay that counts the bytes and chunks it relays each way. `cut()` closes it (the
    port then refuses connections, like an unreachable centre); `restore()` listens again."""

    def __init__(self, target_port: int):
        self.target = target_port
        self.port = free_port()
        self.up = self.down = self.chunks_up = self.chunks_down = 0
        self.conns: list[socket.socket] = []
        self.lock = threading.Lock()
        self.sock: socket.socket | None = None
        self.restore()

    def restore(self) -> None:
        self.sock = socket.socket()
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", self.port))
        self.sock.listen(8)
        threading.Thread(target=self._accept, args=(self.sock,), daemon=True).start()

    def _accept(self, listener: socket.socket) -> None:
        while True:
            try:
                a, _ = listener.accept()
            except OSError:
                return
            b = socket.create_connection(("127.0.0.1", self.target))
            self.conns += [a, b]
            threading.Thread(target=self._pipe, args=(a, b, True), daemon=True).start()
            threading.Thread(target=self._pipe, args=(b, a, False), daemon=True).start()

    def _pipe(self, src: socket.socket, dst: socket.socket, up: bool) -> None:
        try:
            while True:
                data = src.recv(65536)
                if not data:
                    break
                with self.lock:
                    if up:
                        self.up += len(data)
                        self.chunks_up += 1
                    else:
                        self.down += len(data)
                        self.chunks_down += 1
                dst.sendall(data)
        except OSError:
            pass
        finally:
            for s in (src, dst):
                try:
                    s.close()
                except OSError:
                    pass

    def counts(self) -> tuple[int, int, int, int]:
        with self.lock:
            return self.up, self.down, self.chunks_up, self.chunks_down

    def cut(self) -> None:
        if self.sock is not None:
            try:
                self.sock.shutdown(socket.SHUT_RDWR)  # wakes the accept() blocked on it
            except OSError:
                pass
            self.sock.close()
            self.sock = None
        for s in self.conns:
            try:
                s.shutdown(socket.SHUT_RDWR)  # close() alone would not wake the relay's recv()
                s.close()
            except OSError:
                pass
        self.conns.clear()

    def close(self) -> None:
        self.cut()


def make_certs(d: Path) -> Path:
    d.mkdir(parents=True, exist_ok=True)

    def run(*args: str) -> None:
        subprocess.run(["openssl", *args], check=True, capture_output=True, cwd=d, timeout=60)

    run("req", "-x509", "-newkey", "rsa:2048", "-nodes", "-days", "2", "-subj", "/CN=bench CA",
        "-keyout", "ca.key", "-out", "ca.crt")
    run("req", "-newkey", "rsa:2048", "-nodes", "-subj", "/CN=127.0.0.1", "-keyout", "server.key", "-out", "server.csr")
    (d / "san.ext").write_text("subjectAltName=IP:127.0.0.1\n")
    run("x509", "-req", "-in", "server.csr", "-CA", "ca.crt", "-CAkey", "ca.key", "-CAcreateserial", "-days", "2",
        "-extfile", "san.ext", "-out", "server.crt")
    return d


class _NoOutbox:
    def submit(self, alerts, now) -> int:
        return 0


def simulate_day(cfg, night_file: Path, work: Path) -> tuple[list, int]:
    """The daemon's evaluations over 24 h (noon to noon around the night in `night_file`):
    [(sim time, blocks document)], from the real Core with a stepped clock."""
    from frostwatch.daemon import Core, DaemonSettings
    from frostwatch.ingest.csvlog import read_sensor_log
    from frostwatch.store import Store

    store = Store.open(work / f"{night_file.stem}.db")
    readings, _ = read_sensor_log(night_file, {s.id for s in cfg.stations})
    store.add_readings(readings, "bench")
    clock = {"now": min(r.time_utc for r in readings)}
    core = Core(cfg, DaemonSettings(), store, _NoOutbox(), clock=lambda: clock["now"])
    evals: list = []
    core.on_evaluated = lambda now, blocks: evals.append((now, json.loads(json.dumps(blocks))))
    night = core.evaluator.night_at(readings[len(readings) // 2].time_utc)
    start = (night.sunset_utc - dt.timedelta(hours=6)).replace(minute=0, second=0, microsecond=0)
    t, last = start, None
    while t < start + dt.timedelta(hours=24):
        clock["now"] = t
        if last is None or core.in_watch_window(t) or (t - last) >= dt.timedelta(minutes=15):
            core.evaluate(t, "bench")
            last = t
        t += dt.timedelta(minutes=2)
    store.close()
    return evals, len(readings)


def bench_uplink(work: Path, verbose: bool) -> dict:
    from frostwatch.config import load_config
    from frostwatch.fleet.settings import FleetSettings
    from frostwatch.fleet.uplink import SiteUplink, states_from_status_docs

    certs = make_certs(work / "certs")
    central = Broker(work / "central", certs=certs)
    central.start()
    proxy = CountingProxy(central.port)
    cfg_text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    site_id = "cedar-bench-orchard"
    bridge = (REPO / "deploy" / "mosquitto" / "bridge-fleet.conf").read_text(encoding="utf-8")
    for old, new in (("SITE_ID", site_id), ("central.example.coop:8883", f"127.0.0.1:{proxy.port}"),
                     ("/etc/mosquitto/certs/fleet-ca.crt", str(certs / "ca.crt")),
                     ("restart_timeout 10 120", "restart_timeout 2")):
        bridge = bridge.replace(old, new)
    site = Broker(work / "site", extra=bridge)
    site.start()
    out: dict = {}
    try:
        (work / "cfg").mkdir(exist_ok=True)
        cfg_path = work / "cfg" / "site.toml"
        cfg_path.write_text(cfg_text.replace("port = 1883", f"port = {site.port}")
                            .replace('path = "frostwatch.db"', f'path = "{work / "cfg" / "fw.db"}"'), encoding="utf-8")
        cfg = load_config(cfg_path)
        logs = resources.files("frostwatch.sample_logs")
        for name, label in (("2027-04-14-radiation-frost.csv", "radiation frost"), ("2027-04-16-cloudy-safe.csv", "cloudy, safe")):
            with resources.as_file(logs.joinpath(name)) as f:
                evals, n_readings = simulate_day(cfg, Path(f), work)
            mono = {"t": 0.0}
            up = SiteUplink(cfg, FleetSettings(), monotonic=lambda mono=mono: mono["t"])
            up.start()
            deadline = time.monotonic() + 10
            while not up.connected and time.monotonic() < deadline:
                time.sleep(0.05)
            time.sleep(1.0)
            u0, d0, cu0, cd0 = proxy.counts()
            m0, b0 = up.sent_messages, up.sent_bytes
            t0 = evals[0][0]
            sent_states = 0
            ev_i = 0
            for minute in range(24 * 60):
                now = t0 + dt.timedelta(minutes=minute)
                mono["t"] = minute * 60.0
                while ev_i < len(evals) and evals[ev_i][0] <= now:
                    sent_states += up.evaluated(states_from_status_docs(evals[ev_i][1], {}))
                    ev_i += 1
                up.beat(now, ["east-low: battery 3.2 V"] if 600 <= minute < 660 else [])
                time.sleep(0.005)
            time.sleep(2.0)
            u1, d1, cu1, cd1 = proxy.counts()
            up.stop()
            time.sleep(0.5)
            up_b, down_b, chunks = u1 - u0, d1 - d0, (cu1 - cu0) + (cd1 - cd0)
            out[label] = {
                "night_file": name, "evaluations": len(evals), "states_sent": sent_states,
                "messages_published": up.sent_messages - m0, "payload_and_topic_bytes": up.sent_bytes - b0,
                "link_bytes_up_tls": up_b, "link_bytes_down_tls": down_b, "link_chunks": chunks,
                "link_kb_per_day_tls": round((up_b + down_b) / 1000, 1),
                "link_kb_per_day_with_tcpip_estimate": round((up_b + down_b + chunks * TCPIP_HEADER_B) / 1000, 1),
            }
            if verbose:
                r = out[label]
                print(f"  uplink, 24 h around the {label} night: {r['evaluations']} evaluations, {r['states_sent']} "
                      f"states sent, {r['messages_published']} messages; {r['link_kb_per_day_tls']} kB over TLS both "
                      f"ways ({r['link_kb_per_day_with_tcpip_estimate']} kB with TCP/IP headers estimated)")
        # an outage: what each reconnection attempt of the bridge adds to the flush. First a cut with
        # no outage (the bytes of one reconnection: TLS handshake, CONNECT, one copy of the
        # retained states), then a 60 s outage; the extra bytes over the attempts made meanwhile
        # are what one attempt queues.
        up = SiteUplink(cfg, FleetSettings())
        up.start()
        time.sleep(1.0)
        up.evaluated(states_from_status_docs(evals[-1][1], {}))
        up.beat(dt.datetime.now(dt.UTC), force=True)
        time.sleep(1.0)
        log = work / "site" / "mosquitto.log"

        def attempts() -> int:
            return log.read_text(errors="replace").count("Connecting bridge (step 1)")

        def reconnect_bytes(outage_s: float) -> tuple[int, int]:
            a0 = attempts()
            proxy.cut()
            time.sleep(outage_s)
            n = attempts() - a0
            u0, d0, _, _ = proxy.counts()
            proxy.restore()
            deadline = time.monotonic() + 150
            while attempts() - a0 == n and time.monotonic() < deadline:
                time.sleep(0.2)  # wait for the attempt that succeeds
            time.sleep(5.0)
            u1, d1, _, _ = proxy.counts()
            return (u1 - u0) + (d1 - d0), n

        base_b, _ = reconnect_bytes(0.5)
        flush_b, n = reconnect_bytes(60.0)
        up.stop()
        out["outage"] = {"seconds": 60, "reconnection_bytes_tls": base_b, "flush_bytes_tls": flush_b,
                         "failed_attempts": n, "bytes_per_failed_attempt_tls": round((flush_b - base_b) / max(1, n))}
        if verbose:
            o = out["outage"]
            print(f"  bridge reconnection alone: {base_b} bytes (TLS handshake, CONNECT, the retained states once); "
                  f"after a 60 s outage with {n} failed attempts: {flush_b} bytes, about "
                  f"{o['bytes_per_failed_attempt_tls']} bytes more per attempt (3 blocks)")
    finally:
        proxy.close()
        site.stop()
        central.stop()
    return out


# ---- the run -----------------------------------------------------------------------------------


def run(verbose: bool = True, quick: bool = False, out_dir: Path | None = None, sites: int = 500,
        minutes: float | None = None) -> dict:
    work = Path(out_dir or tempfile.mkdtemp(prefix="frostwatch-bench-fleet-"))
    minutes = minutes if minutes is not None else (4.0 if quick else 10.0)
    scale = bench_scale(work / "scale", sites, minutes, 12 if quick else 24, verbose)
    uplink = bench_uplink(work / "uplink", verbose)
    v, fv = scale["visible_s"], scale["floor_visible_s"]
    rad = uplink["radiation frost"]
    figures = [
        {"figure": f"fleet view: change published -> visible in /fleet.json, median ({sites} sites x 5 blocks, every 2 min)",
         "value": v["median"], "unit": "s", "target": f"<= {TARGET_VISIBLE_S:g} s", "floor": fv["median"],
         "floor_label": "bare paho subscriber", "ratio": round(v["median"] / fv["median"], 1) if fv["median"] else None,
         "pass": v["max"] <= TARGET_VISIBLE_S},
        {"figure": "fleet view: change -> visible, worst of the probes", "value": v["max"], "unit": "s",
         "target": f"<= {TARGET_VISIBLE_S:g} s", "floor": None, "floor_label": "", "ratio": None,
         "pass": v["max"] <= TARGET_VISIBLE_S},
        {"figure": f"fleet view RSS, max ({sites} sites)", "value": scale["rss_mb_max"], "unit": "MB",
         "target": f"<= {TARGET_RSS_MB:g} MB", "floor": scale["floor_rss_mb"],
         "floor_label": "bare interpreter with paho, json, http.server",
         "ratio": round(scale["rss_mb_max"] / scale["floor_rss_mb"], 2), "pass": scale["rss_mb_max"] <= TARGET_RSS_MB},
        {"figure": f"fleet view CPU at {scale['messages_per_s']} msg/s", "value": scale["cpu_pct_of_one_core"],
         "unit": "% of a core", "target": "", "floor": None, "floor_label": "", "ratio": None, "pass": None},
        {"figure": f"fleet --json gathers {sites} sites (every level checked)", "value": scale["json_gather_s"], "unit": "s",
         "target": "all sites, right levels", "floor": None, "floor_label": "", "ratio": None,
         "pass": scale["json_sites_listed"] == sites and scale["json_blocks_wrong"] == 0},
        {"figure": "one site's uplink, 24 h around a radiation-frost night (3 blocks), TLS", "value": rad["link_kb_per_day_tls"],
         "unit": "kB/day", "target": "", "floor": None, "floor_label": "", "ratio": None, "pass": None},
    ]
    res = {"run_at_utc": dt.datetime.now(dt.UTC).isoformat(timespec="seconds"), "quick": quick, "scale": scale,
           "uplink": uplink, "figures": figures}
    RESULTS.mkdir(parents=True, exist_ok=True)
    (RESULTS / "fleet.json").write_text(json.dumps(res, indent=2, default=str) + "\n", encoding="utf-8")
    return res


def main(argv: list[str]) -> int:
    import argparse

    p = argparse.ArgumentParser(prog="python -m bench.fleet")
    p.add_argument("--quick", action="store_true")
    p.add_argument("--sites", type=int, default=500)
    p.add_argument("--minutes", type=float)
    a = p.parse_args(argv)
    res = run(quick=a.quick, sites=a.sites, minutes=a.minutes)
    print(json.dumps(res["figures"], indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
