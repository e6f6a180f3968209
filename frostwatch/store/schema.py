"""Schema migrations, applied in order; PRAGMA user_version holds the version reached.

Add a migration by appending to MIGRATIONS; never edit one that has shipped.
"""

MIGRATIONS: dict[int, str] = {
    1: """
CREATE TABLE readings (
    time_utc_ms INTEGER NOT NULL,   -- ms since 1970-01-01 UTC
    station TEXT NOT NULL,
    quantity TEXT NOT NULL,         -- CF standard name (DESIGN.md 1.1)
    value REAL NOT NULL,            -- canonical unit of the quantity
    source TEXT,
    PRIMARY KEY (time_utc_ms, station, quantity)
) WITHOUT ROWID;
CREATE TABLE rejections (
    id INTEGER PRIMARY KEY,
    received_utc_ms INTEGER NOT NULL,
    source TEXT NOT NULL,
    line INTEGER,
    reason TEXT NOT NULL,
    raw TEXT
);
CREATE TABLE projections (
    time_utc_ms INTEGER NOT NULL,
    block TEXT NOT NULL,
    predicted_min_c REAL,
    predicted_min_at_utc_ms INTEGER,
    t10_crossing_utc_ms INTEGER,
    band_c REAL,
    regime TEXT,
    method TEXT,
    detail_json TEXT,
    PRIMARY KEY (time_utc_ms, block)
);
CREATE TABLE alerts (
    id INTEGER PRIMARY KEY,
    key TEXT NOT NULL UNIQUE,       -- idempotency key; also the email Message-ID and a webhook header
    time_utc_ms INTEGER NOT NULL,
    block TEXT NOT NULL,
    level TEXT NOT NULL,
    rank INTEGER NOT NULL,
    advice TEXT,
    message TEXT,
    resolves TEXT
);
CREATE INDEX alerts_time ON alerts(time_utc_ms);
CREATE TABLE deliveries (
    id INTEGER PRIMARY KEY,
    alert_key TEXT NOT NULL,
    channel TEXT NOT NULL,
    recipient TEXT,
    attempt INTEGER NOT NULL DEFAULT 0,
    status TEXT NOT NULL,           -- pending, sent, failed, gave_up
    next_try_utc_ms INTEGER,
    detail TEXT,
    updated_utc_ms INTEGER
);
CREATE INDEX deliveries_status ON deliveries(status, next_try_utc_ms);
CREATE TABLE acks (
    id INTEGER PRIMARY KEY,
    alert_key TEXT NOT NULL,
    who TEXT,
    via TEXT,
    time_utc_ms INTEGER NOT NULL
);
CREATE TABLE protection_runs (
    id INTEGER PRIMARY KEY,
    block TEXT NOT NULL,
    method TEXT NOT NULL,
    start_utc_ms INTEGER NOT NULL,
    stop_utc_ms INTEGER,
    source TEXT
);
CREATE TABLE events (
    id INTEGER PRIMARY KEY,
    time_utc_ms INTEGER NOT NULL,
    kind TEXT NOT NULL,             -- health, stage_change, daemon, ...
    subject TEXT,
    detail TEXT
);
CREATE INDEX events_time ON events(time_utc_ms);
CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT);
""",
    2: """
-- the alerts outbox (frostwatch/store/outbox.py): one row per alert notification and recipient
ALTER TABLE deliveries ADD COLUMN seq INTEGER NOT NULL DEFAULT 0;      -- 0 first notice; repeats and escalations count up
ALTER TABLE deliveries ADD COLUMN idem_key TEXT;                       -- alert key:seq; email Message-ID, webhook header
ALTER TABLE deliveries ADD COLUMN lease_until_utc_ms INTEGER;          -- an attempt in flight; reclaimed after it expires
ALTER TABLE deliveries ADD COLUMN lease_owner TEXT;                    -- which outbox process holds the lease
ALTER TABLE deliveries ADD COLUMN body TEXT;                           -- the text sent (repeats and notices differ)
ALTER TABLE deliveries ADD COLUMN local INTEGER NOT NULL DEFAULT 0;    -- 1: a channel that needs no internet
ALTER TABLE deliveries ADD COLUMN kind TEXT NOT NULL DEFAULT 'alert';  -- alert, resolved, repeat, escalation, notice
CREATE UNIQUE INDEX deliveries_once ON deliveries(alert_key, channel, recipient, seq);
-- escalation bookkeeping per alert that wants an answer
CREATE TABLE alert_state (
    alert_key TEXT PRIMARY KEY,
    state TEXT NOT NULL,             -- firing, acked, resolved, info
    started_utc_ms INTEGER NOT NULL,
    next_repeat_utc_ms INTEGER,
    step INTEGER NOT NULL DEFAULT 0, -- how far down the roster it has gone
    notices INTEGER NOT NULL DEFAULT 0,
    acked_by TEXT,
    acked_utc_ms INTEGER
);
CREATE INDEX alert_state_due ON alert_state(state, next_repeat_utc_ms);
-- one-use acknowledgement tokens that have been spent (frostwatch/alerts/acks.py)
CREATE TABLE ack_tokens_used (
    nonce TEXT PRIMARY KEY,
    alert_key TEXT NOT NULL,
    recipient TEXT,
    via TEXT,
    used_utc_ms INTEGER NOT NULL
);
""",
    3: """
-- each evaluation's decision per block, what every screen shows (frostwatch/decision.py; the SQL
-- is frostwatch/store/decisions.py): the level, the step shown, the monitoring state and the
-- projection as columns for queries, and the whole decision (with the advice plan) as JSON
CREATE TABLE decisions (
    id INTEGER PRIMARY KEY,
    block TEXT NOT NULL,
    time_utc_ms INTEGER NOT NULL,       -- as_of: the evaluation instant
    level TEXT NOT NULL,                -- the level shown: "unmonitored" while not monitored
    rank INTEGER NOT NULL,
    frost_level TEXT NOT NULL,          -- the level the alert rules hold tonight
    monitored INTEGER NOT NULL,         -- 1 while the block's crop-height sensor is fresh
    step TEXT NOT NULL,                 -- the step shown with the level (get-ready, start-now, ...)
    predicted_min_c REAL,
    predicted_min_at_utc_ms INTEGER,
    crossing_utc_ms INTEGER,            -- the trigger temperature's projected crossing of T10 + margin
    ready_by_utc_ms INTEGER,
    version INTEGER NOT NULL,           -- of the JSON document below
    doc TEXT NOT NULL,                  -- the decision as JSON: projection, plan, monitoring, inputs
    UNIQUE (block, time_utc_ms)
);
""",
    4: """
-- the short form of each alert (frostwatch/advice/short.py): the text-message body, at most 131
-- GSM-7 characters; each delivery adds its own acknowledgement code
ALTER TABLE alerts ADD COLUMN short TEXT;
-- one-use acknowledgement codes, one per delivery (frostwatch/alerts/ackcodes.py)
CREATE TABLE ack_codes (
    code TEXT PRIMARY KEY,              -- six characters, e.g. K7QM4X
    alert_key TEXT NOT NULL,
    channel TEXT NOT NULL,
    recipient TEXT NOT NULL,            -- a contact's name, or * for a broadcast channel
    seq INTEGER NOT NULL,               -- the delivery's seq (0 first notice; repeats count up)
    issued_utc_ms INTEGER NOT NULL,
    expires_utc_ms INTEGER NOT NULL,
    used_utc_ms INTEGER,                -- spent: a second use is refused
    used_via TEXT,
    UNIQUE (alert_key, channel, recipient, seq)
);
CREATE INDEX ack_codes_alert ON ack_codes(alert_key);
""",
    5: """
-- a repeat's or escalation's own text-message body (frostwatch/alerts/restate.py): the block's
-- figures as of the repeat, not of the first notice; NULL sends the alert's short form
ALTER TABLE deliveries ADD COLUMN short_body TEXT;
""",
}

SCHEMA_VERSION = max(MIGRATIONS)
