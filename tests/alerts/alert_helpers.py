"""Real servers on loopback for the alert tests: SMTP (aiosmtpd), HTTP (http.server), a black hole."""

from __future__ import annotations

import datetime as dt
import errno
import http.server
import json
import socket
import threading
import tomllib
from importlib import resources
from pathlib import Path

from aiosmtpd.controller import Controller

from frostwatch.config import config_from_dict

T0 = dt.datetime(2027, 4, 15, 9, 0, tzinfo=dt.UTC)  # 02:00 local on the night of 2027-04-14


def demo_raw() -> dict:
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    return tomllib.loads(text)


def make_cfg(tmp_path: Path, alerts: dict | None = None, contacts: list | None = None, channels: list | None = None):
    raw = demo_raw()
    for k in ("alerts", "contacts", "channels"):
        raw.pop(k, None)
    if alerts is not None:
        raw["alerts"] = alerts
    if contacts is not None:
        raw["contacts"] = contacts
    if channels is not None:
        raw["channels"] = channels
    raw["storage"]["path"] = str(tmp_path / "fw.db")
    return config_from_dict(raw, tmp_path / "farm.toml")


class _Handler:
    def __init__(self):
        self.messages = []
        self.lock = threading.Lock()
        self.event = threading.Event()

    async def handle_DATA(self, server, session, envelope):
        from email import message_from_bytes

        msg = message_from_bytes(envelope.content)
        with self.lock:
            self.messages.append(msg)
        self.event.set()
        return "250 OK"


def _unused_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class SmtpServer:
    """aiosmtpd on loopback. A port picked here may be taken by another process (a broker, a
    parallel suite) before the server binds it: `start` then picks another (read `port` after it)."""

    def __init__(self, port: int = 0):
        self.handler = _Handler()
        self._pick = not port
        self.port = port or _unused_port()
        self.controller = Controller(self.handler, hostname="127.0.0.1", port=self.port)

    @property
    def messages(self):
        with self.handler.lock:
            return list(self.handler.messages)

    def start(self):
        for attempt in range(5):
            try:
                self.controller.start()
                return self
            except OSError as exc:
                if not self._pick or exc.errno != errno.EADDRINUSE or attempt == 4:
                    raise
                self.port = _unused_port()
                self.controller = Controller(self.handler, hostname="127.0.0.1", port=self.port)
        return self

    def stop(self):
        self.controller.stop()


class HttpServer:
    """Records POSTs; `status` decides the reply (a list pops one per request, then repeats the last)."""

    def __init__(self, status=200):
        self.requests = []
        self.status = status
        outer = self

        class H(http.server.BaseHTTPRequestHandler):
            def do_POST(self):  # noqa: N802
                n = int(self.headers.get("Content-Length", 0))
                body = self.rfile.read(n)
                outer.requests.append({"path": self.path, "headers": dict(self.headers), "body": body})
                st = outer.status
                if isinstance(st, list):
                    st = st.pop(0) if len(st) > 1 else st[0]
                self.send_response(st)
                self.send_header("Content-Length", "2")
                self.end_headers()
                self.wfile.write(b"{}")

            def log_message(self, *a):
                pass

        self.server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), H)
        self.port = self.server.server_address[1]
        self.thread = threading.Thread(target=self.server.serve_forever, daemon=True)

    def json_bodies(self):
        return [json.loads(r["body"]) for r in self.requests]

    def start(self):
        self.thread.start()
        return self

    def stop(self):
        self.server.shutdown()
        self.server.server_close()


class BlackHole:
    """Accepts TCP connections and never says a word (an SMTP server that hangs)."""

    def __init__(self):
        self.sock = socket.socket()
        self.sock.setsockopt(socket.SOL_SOCKET, socket.SO_REUSEADDR, 1)
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(50)
        self.port = self.sock.getsockname()[1]
        self.conns = []
        self._stop = threading.Event()
        self.thread = threading.Thread(target=self._run, daemon=True)

    def _run(self):
        self.sock.settimeout(0.2)
        while not self._stop.is_set():
            try:
                c, _ = self.sock.accept()
                self.conns.append(c)
            except OSError:
                continue

    def start(self):
        self.thread.start()
        return self

    def stop(self):
        self._stop.set()
        self.thread.join(2)
        for c in self.conns:
            c.close()
        self.sock.close()
