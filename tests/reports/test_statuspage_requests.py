"""The status page's request handling against hostile clients (issue 18, item 7), on a real
loopback server: a negative or absurd Content-Length is answered at once, slow (dripping)
connections are closed after the request deadline, and the handler thread count stays bounded."""

from __future__ import annotations

import socket
import threading
import time

import pytest

from frostwatch.config import load_config
from frostwatch.status.server import make_server


@pytest.fixture
def server(frost_night_store):
    cfg = load_config(frost_night_store)
    srv = make_server(cfg, "127.0.0.1", 0, refresh_s=30)
    srv.request_deadline_s = 2.0
    th = threading.Thread(target=srv.serve_forever, daemon=True)
    th.start()
    yield srv, srv.server_address[1]
    srv.shutdown()
    srv.server_close()
    srv.store.close()


def _status_line(port: int, request: bytes, wait_s: float = 5.0) -> str:
    """Send `request` and read the status line, without closing our side (a server that waits for
    more body would block here until `wait_s`)."""
    with socket.create_connection(("127.0.0.1", port), timeout=wait_s) as s:
        s.sendall(request)
        try:
            data = s.recv(200)
        except TimeoutError:
            return "no answer"
    return data.split(b"\r\n", 1)[0].decode("latin-1")


@pytest.mark.parametrize(("path", "length", "code"), [
    ("/ack/abc", "-1", "400"), ("/gateway/ack", "-1", "400"), ("/ack/abc", "-99999999999", "400"),
    ("/gateway/ack", "1e9", "400"), ("/gateway/ack", "abc", "400"),
    ("/gateway/ack", "99999999999999999999999", "413"), ("/ack/abc", "1000000", "413"),
])
def test_negative_or_absurd_content_length_is_answered_at_once(server, path, length, code):
    """Pass: the status line comes back while the client still holds the connection open
    (before the fix, Content-Length: -1 made the handler read until the client left)."""
    _srv, port = server
    req = f"POST {path} HTTP/1.1\r\nHost: x\r\nContent-Length: {length}\r\n\r\n".encode()
    assert f" {code} " in _status_line(port, req)


def test_twenty_slow_connections_are_closed_and_threads_return_to_baseline(server):
    """Pass: 20 clients each start a request and then drip one byte every 0.5 s; the server
    closes every one of them (after its 2 s request deadline, or at once beyond
    max_connections) long before the drip would end, no more than max_connections handler
    threads exist at any time, the thread count returns to its baseline, and the page still
    answers a normal request."""
    srv, port = server
    baseline = threading.active_count()
    socks = []
    for _ in range(20):
        s = socket.create_connection(("127.0.0.1", port), timeout=5)
        s.sendall(b"GET / HTTP/1.1\r\nHost: x\r\n")
        socks.append(s)
    open_ = set(range(20))
    peak = threading.active_count()
    for _ in range(60):  # 30 s of dripping at most; the deadline is 2 s
        time.sleep(0.5)
        peak = max(peak, threading.active_count())
        for i in list(open_):
            try:
                socks[i].sendall(b"X")
                socks[i].settimeout(0.01)
                if socks[i].recv(1) == b"":
                    open_.discard(i)
            except TimeoutError:
                pass
            except OSError:  # reset or broken pipe: closed by the server
                open_.discard(i)
        if not open_:
            break
    for s in socks:
        s.close()
    assert not open_, f"{len(open_)} slow connections were never closed"
    assert peak <= baseline + srv.max_connections
    deadline = time.monotonic() + 10
    while threading.active_count() > baseline and time.monotonic() < deadline:
        time.sleep(0.1)
    assert threading.active_count() <= baseline
    assert " 200 " in _status_line(port, b"GET /healthz HTTP/1.0\r\n\r\n")
