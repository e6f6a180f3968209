"""Alert channels. Each module has `send(channel, msg, to, base_dir) -> str` (a short receipt) and
raises `Transient` (retry later) or `Permanent` (do not retry: misconfigured or refused).
Every call has a timeout, so a hung server costs at most `channel.timeout_s` of that channel's
own worker and never blocks evaluations or other channels.

    message.py    OutMessage (what a channel is handed), Transient and Permanent (what it raises)
    template.py   the webhook body template: placeholders, rendering, validation (pure)
    deadline.py   one deadline over a whole exchange, answer included
    email.py, webhook.py, mqtt.py, command.py, console.py: one channel type each
"""

from __future__ import annotations

from frostwatch.alerts.channels.message import OutMessage, Permanent, Transient

__all__ = ["OutMessage", "Permanent", "Transient", "sender"]


def sender(channel_type: str):
    """The send function of a channel type (imported lazily: paho only for mqtt, and so on)."""
    if channel_type == "email":
        from frostwatch.alerts.channels import email as m
    elif channel_type == "webhook":
        from frostwatch.alerts.channels import webhook as m
    elif channel_type == "mqtt":
        from frostwatch.alerts.channels import mqtt as m
    elif channel_type == "command":
        from frostwatch.alerts.channels import command as m
    else:
        from frostwatch.alerts.channels import console as m
    return m.send
