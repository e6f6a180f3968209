"""What an alert channel is handed (`OutMessage`) and what it raises (`Transient`, `Permanent`).

Kept apart from the package's `sender` so that each channel module imports these without importing
the package that imports it.
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
