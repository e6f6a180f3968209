"""The hash of what a replay stored, table by table (issue 19; a tool, not run by `python -m bench`).

    python -m bench.replay_hash STORE.db [--json]

Two replays of the same log with the same config store the same rows whatever their speed-ups:
this prints, for each table a replay writes, its row count and the SHA-256 of its rows in the
order stored (rowid), so a change can be checked against the store of the code before it:

- projections: every column;
- decisions: every column, the compressed document as stored (its bytes), and the document
  decoded (zlib, JSON) on its own line, so that a difference in the compression alone shows apart;
- alerts and deliveries: every column;
- ack_codes: every column but the code itself (random by design) and the row's count.

Readings are left out (the parse is not what this checks). Exit status 0; it only reports.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
import sys
import zlib

TABLES = {  # table -> columns hashed (None: all)
    "projections": None,
    "decisions": None,
    "alerts": None,
    "deliveries": None,
    "ack_codes": ["alert_key", "channel", "recipient", "seq", "issued_utc_ms", "expires_utc_ms", "used_utc_ms",
                  "used_via"],
}


def _digest(rows) -> tuple[int, str]:
    h = hashlib.sha256()
    n = 0
    for row in rows:
        h.update(repr(row).encode("utf-8"))
        h.update(b"\n")
        n += 1
    return n, h.hexdigest()


def store_hash(path: str) -> dict:
    """{table: {"rows": n, "sha256": hex}} and "decision_docs" (the documents decoded)."""
    conn = sqlite3.connect(f"file:{path}?mode=ro", uri=True)
    try:
        out = {}
        for table, cols in TABLES.items():
            what = "*" if cols is None else ", ".join(cols)
            n, h = _digest(conn.execute(f"SELECT {what} FROM {table} ORDER BY rowid"))  # noqa: S608 - fixed names
            out[table] = {"rows": n, "sha256": h}
        docs = (json.loads(zlib.decompress(doc)) for (doc,) in conn.execute("SELECT doc FROM decisions ORDER BY rowid"))
        n, h = _digest(json.dumps(d, sort_keys=True) for d in docs)
        out["decision_docs"] = {"rows": n, "sha256": h}
        return out
    finally:
        conn.close()


def main(argv: list[str]) -> int:
    if not argv or argv[0].startswith("-"):
        print(__doc__.strip().splitlines()[2].strip())
        return 2
    got = store_hash(argv[0])
    if "--json" in argv:
        print(json.dumps(got, indent=1))
    else:
        for table, r in got.items():
            print(f"{table:13s} {r['rows']:8d} {r['sha256']}")
        print(f"all           {hashlib.sha256(json.dumps(got, sort_keys=True).encode()).hexdigest()}")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
