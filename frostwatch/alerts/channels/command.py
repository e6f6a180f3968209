"""A local command (for example a GSM modem's SMS tool): the message goes to its stdin.

`argv` may use {to}, {key}, {level}, {rank}, {block}, {code}. Needs no internet, so it counts as
local. With `form = "short"` (the default: a GSM modem sends text messages) stdin is the short
form, one text message ending "Ack: reply CODE"; `form = "long"` gives the full message and the
acknowledgement link.
A non-zero exit or a timeout is retried; a missing program is a configuration fault.
"""

from __future__ import annotations

import subprocess

from frostwatch.alerts.channels.message import Permanent, Transient


def send(channel, msg, to, base_dir=None) -> str:
    fields = {"to": to if to and to != "*" else "", "key": msg.idem_key, "level": msg.level,
              "rank": str(msg.rank), "block": msg.block, "code": msg.code}
    argv = [a.format_map(fields) for a in channel.options["argv"]]
    if channel.options.get("form", "short") == "short" and msg.short:
        text = msg.short
    else:
        text = msg.title + "\n" + msg.body + (f"\nAck: {msg.ack_url}" if msg.ack_url else "") + (
            f"\nAck code: {msg.code}" if msg.code else "")
    try:
        r = subprocess.run(argv, input=text.encode("utf-8"), capture_output=True, timeout=channel.timeout_s,
                           cwd=base_dir, check=False)
    except FileNotFoundError:
        raise Permanent(f"command {argv[0]!r} not found") from None
    except PermissionError:
        raise Permanent(f"command {argv[0]!r} is not executable") from None
    except subprocess.TimeoutExpired:
        raise Transient(f"command {argv[0]!r} did not finish within {channel.timeout_s:g} s") from None
    if r.returncode != 0:
        err = r.stderr.decode("utf-8", "replace").strip().splitlines()
        raise Transient(f"command {argv[0]!r} exited {r.returncode}: {(err[-1] if err else '')[:200]}")
    return f"{argv[0]} exited 0"
