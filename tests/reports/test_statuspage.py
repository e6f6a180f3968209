"""The local status page on a real loopback HTTP server: content, phone rendering in headless
Chromium, the token for LAN binds, and acknowledgement links.

The page shows the stored decisions of the replayed demo night; a heartbeat written at the page's
clock stands for a running daemon (without one every block is not monitored: see the last tests)."""

from __future__ import annotations

import datetime as dt
import json
import threading
import urllib.error
import urllib.request

import pytest
from reports_helpers import chromium

from frostwatch.config import load_config
from frostwatch.errors import UsageError
from frostwatch.status.server import make_server
from frostwatch.store import Store

NOW = dt.datetime.fromisoformat("2027-04-15T04:30:00-07:00").astimezone(dt.UTC)  # mid-frost, demo night
TOKEN = "s3cret-token-for-tests-0123456789"


@pytest.fixture
def running(frost_night_store):
    servers = []

    def start(bind="127.0.0.1", token=None, now=NOW, daemon_alive=True):
        cfg = load_config(frost_night_store)
        with Store.open(cfg.storage.path) as store:
            beat = {"time": (now - dt.timedelta(seconds=40)).isoformat(), "stored_every_s": 300} if daemon_alive else None
            store.set_meta("daemon.heartbeat", json.dumps(beat))
        srv = make_server(cfg, bind, 0, token=token, now_fn=lambda: now, refresh_s=30)
        threading.Thread(target=srv.serve_forever, daemon=True).start()
        servers.append(srv)
        return srv, srv.server_address[1]

    yield start
    for s in servers:
        s.shutdown()
        s.server_close()
        s.store.close()


def _get(url, headers=None, data=None):
    req = urllib.request.Request(url, headers=headers or {}, data=data)
    try:
        with urllib.request.urlopen(req, timeout=10) as r:
            return r.status, r.read().decode(), dict(r.headers)
    except urllib.error.HTTPError as exc:
        return exc.code, exc.read().decode(), dict(exc.headers)


def test_page_shows_every_block_with_temperatures_alerts_and_refresh(running):
    _, port = running()
    code, body, headers = _get(f"http://127.0.0.1:{port}/")
    assert code == 200 and headers["Content-Type"].startswith("text/html")
    for b in ("east", "river", "hill"):
        assert f'id="block-{b}"' in body
    assert '<meta http-equiv="refresh" content="30">' in body
    assert 'name="viewport"' in body and "<svg" in body
    assert "T10 -2.2 °C" in body and "2027-04-15 04:30 PDT" in body
    assert 'data-level="protect"' in body and "keep the wind machines running" in body
    assert "advises; the grower decides" in body and "NOT MONITORED" not in body
    code, doc, _ = _get(f"http://127.0.0.1:{port}/status.json")
    assert code == 200 and '"block": "east"' in doc


def test_status_json_is_the_contract_document_of_the_stored_decisions(running, frost_night_store):
    """DESIGN.md 1.4 second round: {site, as_of, daemon_alive, blocks: [{block, level, rank,
    monitored, as_of, reason}]}, read from the stored decisions (the evaluation at or before now)."""
    from frostwatch.store import decisions as stored

    _, port = running()
    code, body, headers = _get(f"http://127.0.0.1:{port}/status.json")
    doc = json.loads(body)
    assert code == 200 and headers["Content-Type"] == "application/json"
    assert doc["site"] == "Cedar Bench Orchard" and doc["daemon_alive"] is True
    assert doc["as_of"] == "2027-04-15T11:30:00Z"
    with Store.open(load_config(frost_night_store).storage.path) as store:
        latest = stored.latest(store, until_utc=NOW)
    for b in doc["blocks"]:
        assert {"block", "level", "rank", "monitored", "as_of", "reason"} <= set(b)
        assert isinstance(b["rank"], int) and isinstance(b["monitored"], bool) and b["reason"]
        dcs = latest[b["block"]]
        assert (b["level"], b["rank"], b["monitored"]) == (dcs.level, dcs.rank, True)
        assert b["as_of"] == dcs.as_of_utc.isoformat().replace("+00:00", "Z")
        assert b["projection"]["predicted_min_c"] == dcs.projection.predicted_min_c


def test_without_a_running_daemon_no_block_is_green_and_each_says_why(running):
    _, port = running(daemon_alive=False)
    _, body, _ = _get(f"http://127.0.0.1:{port}/")
    assert body.count('class="card unmonitored"') == 3 and 'class="card monitored' not in body
    assert "never run on this store" in body and "no alert" not in body.lower()
    doc = json.loads(_get(f"http://127.0.0.1:{port}/status.json")[1])
    assert doc["daemon_alive"] is False
    assert {(b["level"], b["rank"], b["monitored"]) for b in doc["blocks"]} == {("go-look", 4, False)}
    assert {b["frost_level"] for b in doc["blocks"]} >= {"protect"}  # the last frost level is kept


def test_page_renders_on_a_phone_in_headless_chromium(running, tmp_path):
    _, port = running()
    dom = chromium(f"http://127.0.0.1:{port}/", tmp_path, "status-page.png", height=915)
    for b in ("east", "river", "hill"):
        assert f'id="block-{b}"' in dom
    assert "T10" in dom and "°C" in dom and "as-of" in dom


def test_binding_beyond_loopback_without_a_token_is_refused(frost_night_store):
    cfg = load_config(frost_night_store)
    with pytest.raises(UsageError, match="token"):
        make_server(cfg, "0.0.0.0", 0)


def test_lan_bound_page_refuses_requests_without_the_token(running):
    _, port = running(bind="0.0.0.0", token=TOKEN)
    base = f"http://127.0.0.1:{port}"
    assert _get(base + "/")[0] == 403
    assert _get(base + "/status.json")[0] == 403
    assert _get(base + "/?token=wrong-token-wrong-token")[0] == 403
    assert _get(base + "/", {"Cookie": "frostwatch_token=wrong"})[0] == 403
    code, body, headers = _get(base + f"/?token={TOKEN}")
    assert code == 200 and 'id="block-east"' in body
    assert headers["Set-Cookie"].startswith(f"frostwatch_token={TOKEN}") and "HttpOnly" in headers["Set-Cookie"]
    assert _get(base + "/", {"Cookie": f"frostwatch_token={TOKEN}"})[0] == 200


def test_page_is_read_only(running):
    _, port = running()
    assert _get(f"http://127.0.0.1:{port}/", data=b"x=1")[0] == 405


def test_ack_link_confirms_then_acknowledges_once(running, frost_night_store):
    from frostwatch.alerts import acks  # a product module: a broken one fails here, never skips

    srv, port = running()
    with Store.open(load_config(frost_night_store).storage.path) as store:
        key = next(a["key"] for a in store.alerts(NOW - dt.timedelta(hours=12), NOW) if a["block"] == "east")
        token = acks.ack_link_token(store, key, "manager@example.org", issued_utc=NOW - dt.timedelta(minutes=5))
    code, body, _ = _get(f"http://127.0.0.1:{port}/ack/{token}")
    assert code == 200 and 'id="confirm"' in body and 'method="post"' in body
    code, body, _ = _get(f"http://127.0.0.1:{port}/ack/{token}", data=b"")
    assert code == 200 and "Acknowledged" in body, body
    code, body, _ = _get(f"http://127.0.0.1:{port}/ack/{token}", data=b"")
    assert code == 403 and "already been used" in body
    assert _get(f"http://127.0.0.1:{port}/ack/forged.token.here", data=b"")[0] == 403
    _, page, _ = _get(f"http://127.0.0.1:{port}/")
    assert "acknowledged by manager@example.org" in page


def test_gateway_callback_acknowledges_an_sms_reply_by_its_code(running, frost_night_store):
    """The grower replies "ok" and the code of the text message (replay recorded the console
    delivery of each alert with its code): the alert is acknowledged once; the same reply again is
    refused as used; a wrong code is refused and counted; a reply without a code is a 400."""
    import json

    srv, port = running()
    with Store.open(load_config(frost_night_store).storage.path) as store:
        key = next(a["key"] for a in store.alerts(NOW - dt.timedelta(hours=12), NOW) if a["block"] == "hill")
        code = store.conn.execute("SELECT code FROM ack_codes WHERE alert_key=?", (key,)).fetchone()[0]
    headers = {"Content-Type": "application/json"}
    reply = json.dumps({"from": "+15550100", "text": f"ok {code.lower()} on my way"}).encode()
    code_, body, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers=headers, data=reply)
    assert code_ == 200 and json.loads(body)["ok"] is True, body
    code_, body, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers=headers, data=reply)
    assert code_ == 403 and "already been used" in json.loads(body)["message"]
    code_, body, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", data=b"code=Z2Z2Z2&from=mallory")
    assert code_ == 403 and "not a code frostwatch sent" in json.loads(body)["message"]
    code_, _, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers=headers, data=b'{"text": "thanks"}')
    assert code_ == 400
    with Store.open(load_config(frost_night_store).storage.path) as store:
        rows = list(store.db.query("SELECT who, via FROM acks WHERE alert_key = ?", [key]))
    assert [(r["who"], r["via"]) for r in rows] == [("+15550100", "sms")]


def test_gateway_callback_acknowledges_from_an_sms_reply(running, frost_night_store):
    """An SMS gateway forwards the grower's reply (the token somewhere in the text) as a POST:
    the alert is acknowledged once; the same reply again, or a forged token, is refused."""
    import json

    from frostwatch.alerts import acks

    srv, port = running()
    with Store.open(load_config(frost_night_store).storage.path) as store:
        key = next(a["key"] for a in store.alerts(NOW - dt.timedelta(hours=12), NOW) if a["block"] == "river")
        token = acks.ack_link_token(store, key, "+15550100", issued_utc=NOW - dt.timedelta(minutes=5))
    reply = json.dumps({"from": "+15550100", "text": f"OK on my way {token}"}).encode()
    headers = {"Content-Type": "application/json"}
    code, body, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers=headers, data=reply)
    assert code == 200 and json.loads(body)["ok"] is True, body
    code, body, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers=headers, data=reply)
    assert code == 403 and json.loads(body)["ok"] is False
    form = b"token=v1.aaaaaaaaaaaaaaaaaaaa.bbbbbbbbbbbbbbbbbbbb&from=mallory"
    code, _, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", data=form)
    assert code == 403
    code, _, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers=headers, data=b'{"text": "yes"}')
    assert code == 400
    with Store.open(load_config(frost_night_store).storage.path) as store:
        rows = list(store.db.query("SELECT who, via FROM acks WHERE alert_key = ?", [key]))
    assert rows and rows[0]["via"].startswith("gateway")


def test_page_escapes_names_from_the_config(frost_night_store):
    # The page is assembled with f-strings: every text from the config or the store goes through
    # html.escape. A farm or block name holding markup shows as text, never as markup.
    import dataclasses

    from frostwatch.status.render import render_page
    from frostwatch.status.snapshot import snapshot

    cfg = load_config(frost_night_store)
    hostile = '<script>alert("x")</script> & <marquee>'
    cfg = dataclasses.replace(cfg, site=dataclasses.replace(cfg.site, name=hostile),
                              blocks=type(cfg.blocks)(dataclasses.replace(b, name=hostile) for b in cfg.blocks))
    with Store.open(cfg.storage.path) as store:
        page = render_page(snapshot(cfg, store, NOW), 30)
    assert "<script" not in page and "<marquee" not in page
    assert page.count("&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &lt;marquee&gt;") == 1 + len(cfg.blocks)


def test_gateway_callback_nested_too_deep_is_answered_400(running):
    # json.loads raises RecursionError on 4,000 nested brackets; it once escaped the handler and
    # the connection closed with no answer. Any body gets an answer.
    _, port = running()
    deep = b"[" * 4000 + b"]" * 4000
    code, body, _ = _get(f"http://127.0.0.1:{port}/gateway/ack", headers={"Content-Type": "application/json"}, data=deep)
    assert code == 400 and "no acknowledgement code or token" in body
