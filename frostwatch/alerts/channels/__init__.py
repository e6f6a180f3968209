"""Alert channels. Each module has `send(channel, msg, to, base_dir) -> str` (a short receipt) and
raises `Transient` (retry later) or `Permanent` (do not retry: misconfigured or refused).
Every call has a timeout, so a hung server costs at most `channel.timeout_s` of that channel's
own worker and never blocks evaluations or other channels.
"""

from __future__ import annotations

from dataclasses import dataclass

from frostwatch.errors import DeliveryError


class Transient(DeliveryError):
    """A failure worth retrying: timeouts, refused connections, 5xx, 4xx SMTP replies."""


class Permanent(DeliveryError):
    """A failure that a retry will not fix: 4xx HTTP (not 408/429), 5xx SMTP, bad config."""


@dataclass(frozen=True)
class OutMessage:
    idem_key: str        # alert key:seq, the same on every attempt of this notification
    alert_key: str
    seq: int
    level: str
    rank: int
    block: str
    title: str
    body: str
    kind: str = "alert"
    ack_url: str = ""
    short: str = ""      # the whole text message (at most 160 GSM-7 characters, the code included)
    code: str = ""       # this delivery's acknowledgement code (frostwatch.alerts.ackcodes)

    def text_for(self, form: str) -> tuple[str, str]:
        """(title, whole message) in the form a channel sends: "short" (one text message; the
        default of SMS and push channels) or "long" (the full message, as email sends it)."""
        if form == "short" and self.short:
            return self.short, self.short
        return self.title, self.body


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
