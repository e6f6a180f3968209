"""The commented example config that `frostwatch init` writes: every section of the config.

The demo farm's config (`frostwatch.sample_logs/demo-farm.toml`) carries the sections a farm must
fill in, with comments; the sections every key of which has a default follow it here, commented
out, each key with its default. The [daemon] keys and defaults come from the daemon's own table,
so the example cannot fall behind it.
"""

from __future__ import annotations

import json
from importlib import resources

STATUS_PAGE = """\
# The status page for phones (`frostwatch status-page`): read-only, refreshing itself.
# [status_page]
# bind = "127.0.0.1"          # loopback only; any wider address needs a token
# port = 8470
# refresh_s = 60              # seconds between page refreshes, 5-3600
# public_url = "https://shed.example.org/frostwatch"   # the address phones reach the page at
# token_file = "/etc/frostwatch/credentials/status-token"   # or token = "..." (16+ characters)
"""

MAPPINGS = """\
# Other JSON payload layouts over MQTT, one [[mappings]] each (a LoRa gateway's, for example).
# [[mappings]]
# topic = "lora/{station}/up"                # one whole level may be {station}; + and # allowed
# fields = { "obj.temp" = "air_temperature", rh = "relative_humidity" }   # payload field = quantity
# units = { "obj.temp" = "degF" }            # payload field = unit (default: the canonical unit)
# time_field = "ts"                          # default: the time the message arrived
# time_format = "unix_s"                     # iso8601, unix_s or unix_ms
# station_map = { "dev-17" = "east-low" }    # device id in the topic = station id
"""

# keys of [daemon] whose default is worked out from other sections
_DERIVED = {
    "night_interval_min": "[forecast] evaluation_interval_min",
    "silent_after_intervals": "[forecast] stale_after_intervals",
    "report_dir": "reports/ beside the store",
    "status_topic": "the [broker] prefix, then /status",
}
_SHOWN = {"report_dir": "reports", "status_topic": "frostwatch/status"}


def _toml_value(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, float):
        return f"{v:g}"
    if isinstance(v, int):
        return str(v)
    return json.dumps(str(v))


def daemon_section() -> str:
    """[daemon], commented out: every key with its default and what it means."""
    import dataclasses

    from frostwatch.daemon_settings import _DAEMON_KEYS, DaemonSettings

    defaults = {f.name: f.default for f in dataclasses.fields(DaemonSettings)}
    lines = ["# The daemon (`frostwatch run`); every key is optional, shown with its default.", "# [daemon]"]
    for key, (_types, what) in _DAEMON_KEYS.items():
        value = _SHOWN.get(key, defaults.get(key))
        setting = f"# {key} = {_toml_value(value)}"
        note = what + (f" (default: {_DERIVED[key]})" if key in _DERIVED else "")
        lines.append(f"{setting:<36} # {note}")
    return "\n".join(lines) + "\n"


def example_config_text() -> str:
    """The whole example: the demo farm's config, then the optional sections, commented out."""
    demo = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    head = "\n# ---- optional sections: uncomment and change what you need ----\n\n"
    return demo.rstrip("\n") + "\n" + head + "\n".join([STATUS_PAGE, daemon_section(), MAPPINGS])
