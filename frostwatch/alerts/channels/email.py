"""Email over SMTP (smtplib): STARTTLS (default), SSL or plain, optional AUTH.

The password comes from `password_file` or a systemd credential (`password_credential`, read from
$CREDENTIALS_DIRECTORY), never from the config itself. The idempotency key travels as the
Message-ID, so a resent notice threads with (and can be deduplicated against) the first one.
An accepted message (250) means handed off, not read: escalation continues until someone
acknowledges (reliability.md finding 20).
"""

from __future__ import annotations

import email.utils
import re
import smtplib
import ssl
from email.message import EmailMessage

from frostwatch.alerts.channels import Permanent, Transient
from frostwatch.alerts.config import read_secret


def message_id(idem_key: str, domain: str = "frostwatch.local") -> str:
    local = re.sub(r"[^A-Za-z0-9!#$%&'*+\-=?^_`{|}~.]", ".", idem_key).strip(".")
    return f"<{local}@{domain}>"


def build(channel, msg, to: str) -> EmailMessage:
    m = EmailMessage()
    prefix = channel.options.get("subject_prefix", "[frostwatch]")
    m["Subject"] = f"{prefix} {msg.title}".strip()
    m["From"] = channel.options["from"]
    m["To"] = to
    m["Message-ID"] = message_id(msg.idem_key)
    m["Date"] = email.utils.formatdate(localtime=False)
    m["X-Frostwatch-Key"] = msg.idem_key
    if msg.seq > 0 or msg.kind != "alert":
        m["References"] = message_id(f"{msg.alert_key}:0")
    body = msg.body
    if msg.ack_url:
        body += f"\n\nAcknowledge (one use): {msg.ack_url}\nor run: frostwatch ack {msg.alert_key}"
    m.set_content(body)
    return m


def send(channel, msg, to, base_dir=None) -> str:
    if not to or to == "*":
        raise Permanent(f"email channel {channel.name}: no address for this recipient")
    return send_message(channel, build(channel, msg, to), base_dir)


def send_message(channel, message: EmailMessage, base_dir=None) -> str:
    """Hand a built message to the channel's SMTP server (SSL or STARTTLS, login with the
    password from a file or credential, every call under the channel's timeout).

    Raises Permanent (do not retry: login refused, 5xx) or Transient (retry: timeouts, 4xx,
    connection errors). Used by alert deliveries and by the morning report email.
    """
    o = channel.options
    host, tls = o["host"], o.get("tls", "starttls")
    port = int(o.get("port", 465 if tls == "ssl" else 587))
    t = channel.timeout_s
    try:
        password = read_secret(o, base_dir)
    except OSError as exc:
        raise Permanent(f"email channel {channel.name}: cannot read the password: {exc}") from None
    try:
        if tls == "ssl":
            smtp = smtplib.SMTP_SSL(host, port, timeout=t, context=ssl.create_default_context())
        else:
            smtp = smtplib.SMTP(host, port, timeout=t)
        with smtp:
            if tls == "starttls":
                smtp.starttls(context=ssl.create_default_context())
            if o.get("username"):
                smtp.login(o["username"], password or "")
            refused = smtp.send_message(message)
    except smtplib.SMTPAuthenticationError as exc:
        raise Permanent(f"email {host}:{port}: login refused ({exc.smtp_code})") from None
    except smtplib.SMTPRecipientsRefused as exc:
        codes = [c for c, _ in exc.recipients.values()]
        cls = Permanent if all(c >= 500 for c in codes) else Transient
        raise cls(f"email {host}:{port}: recipient refused {codes}") from None
    except smtplib.SMTPResponseException as exc:
        cls = Permanent if exc.smtp_code >= 500 else Transient
        raise cls(f"email {host}:{port}: {exc.smtp_code} {exc.smtp_error[:120]!r}") from None
    except TimeoutError:
        raise Transient(f"email {host}:{port}: no answer within {t:g} s") from None
    except (OSError, smtplib.SMTPException) as exc:
        raise Transient(f"email {host}:{port}: {type(exc).__name__}: {exc}") from None
    if refused:
        raise Transient(f"email {host}:{port}: refused {sorted(refused)}")
    return f"accepted by {host}:{port}"
