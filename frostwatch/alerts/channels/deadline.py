"""One deadline for a whole delivery, enforced on the sockets (issue 18, item 4).

A per-read timeout does not bound a request: a server that sends one byte every 4 s keeps each
read under a 5 s timeout and holds the channel for as long as it likes. `Deadline(seconds)` is a
context manager; connections registered with `watch` (objects whose `.sock` appears once they
connect, as urllib3's and smtplib's do) have their sockets shut down when the deadline passes, so
the blocked read returns at once and the delivery fails as "no complete answer". The outbox's
worker also abandons a send that outlives its deadline (frostwatch/alerts/outbox.py).
"""

from __future__ import annotations

import socket
import threading
import time


class Deadline:
    def __init__(self, seconds: float):
        self.seconds = float(seconds)
        self.expired = False
        self._conns: list[object] = []
        self._lock = threading.Lock()
        self._done = threading.Event()
        self._thread = threading.Thread(target=self._run, name="delivery-deadline", daemon=True)
        self.start = time.monotonic()

    def __enter__(self) -> Deadline:
        self.start = time.monotonic()
        self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._done.set()

    def left(self) -> float:
        return max(0.0, self.seconds - (time.monotonic() - self.start))

    def watch(self, conn: object) -> object:
        """Shut down `conn.sock` (or `conn` itself if it is a socket) at the deadline."""
        with self._lock:
            self._conns.append(conn)
        if self.expired:
            self._cut()
        return conn

    def _run(self) -> None:
        if self._done.wait(self.seconds):
            return
        self.expired = True
        while not self._done.is_set():  # a socket made after the deadline is cut as soon as it exists
            self._cut()
            self._done.wait(0.2)

    def _cut(self) -> None:
        with self._lock:
            conns = list(self._conns)
        for c in conns:
            sock = c if isinstance(c, socket.socket) else getattr(c, "sock", None)
            if sock is None:
                continue
            try:
                sock.shutdown(socket.SHUT_RDWR)
            except OSError:
                pass
