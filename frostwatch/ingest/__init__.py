"""Readings in: sensor logs (CSV) and MQTT, each row or message a Reading or a Rejection.

    parse.py     pure: a log row or a native MQTT payload -> readings and at most one rejection
    values.py    pure: one value (time, number, unit, range) and one message's readings, strict JSON
    layouts.py   pure: other JSON layouts, read by the config's [[mappings]]
    mappings.py  the [[mappings]] and [broker] tls keys validated (no paho)
    csvlog.py    a sensor log file read row by row; bulk.py a season of logs at once (replay)
    limits.py    how many rejections one source may store per hour
    mqtt.py      the paho client (the only module that imports paho)
    writer.py    the ingest writer: commit to SQLite, then acknowledge to the broker
"""
