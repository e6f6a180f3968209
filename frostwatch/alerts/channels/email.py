"""Email over SMTP (smtplib): STARTTLS (default), SSL or plain, optional AUTH.

The password comes from `password_file` or a systemd credential (`password_credential`, read from
$CREDENTIALS_DIRECTORY), never from the config itself. The idempotency key travels as the
Message-ID, so a resent notice threads with (and can be deduplicated against) the first one.
An accepted message (250) means handed off, not read: escalation continues until someone
acknowledges (reliability.md finding 20).

Which failures are retried (issue 18, item 5): timeouts, connection errors and every 4xx; a 5xx
too (a server that answers 4xx and then 5xx while it recovers must not lose the alerts of that
window), with the outbox's backoff up to `[alerts] give_up_after_h`. Only a refused login
(authentication, 530/534/535/538 or 5.7.x) or a refused address (the sender or every recipient,
550/551/553 or 5.1.x) is permanent: it raises the "channel misconfigured" notice. `timeout_s`
bounds the whole SMTP session (frostwatch/alerts/channels/deadline.py), with time added for a big
message (one second per 16 KiB: the morning report's attachments).
"""

from __future__ import annotations

import email.utils
import re
import smtplib
import ssl
from email.message import EmailMessage

from frostwatch.alerts.channels.deadline import Deadline
from frostwatch.alerts.channels.message import Permanent, Transient
from frostwatch.secrets import read_secret

AUTH_CODES = (530, 534, 535, 538)
MIN_BYTES_PER_S = 16 * 1024  # a slow farm uplink still sends this much a second
ADDRESS_CODES = (550, 551, 553)


def _enhanced(text: bytes | str) -> str:
    """The enhanced status code (RFC 3463, e.g. "5.1.1") at the start of a reply, or ""."""
    t = text.decode("utf-8", "replace") if isinstance(text, bytes) else str(text)
    m = re.match(r"\s*([245]\.\d{1,3}\.\d{1,3})", t)
    return m.group(1) if m else ""


def is_misconfiguration(code: int, text: bytes | str) -> bool:
    """A 5xx that retrying cannot fix: authentication or a refused address."""
    if code < 500:
        return False
    enh = _enhanced(text)
    if enh.startswith(("5.7.8", "5.7.0", "5.7.1", "5.7.9", "5.7.11")) and code in AUTH_CODES + (554,):
        return True
    return code in AUTH_CODES or code in ADDRESS_CODES or enh.startswith("5.1.")


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
        body += f"\n\nAcknowledge (one use): {msg.ack_url}"
    if msg.code:
        body += (f"\n{'or ' if msg.ack_url else ''}acknowledge with the code {msg.code}: reply {msg.code} to the text "
                 f"message, or run: frostwatch ack {msg.code}")
    elif msg.ack_url:
        body += f"\nor run: frostwatch ack {msg.alert_key}"
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
    # the whole session's deadline: timeout_s, plus time to send a big message (the morning
    # report's attachments) at no less than MIN_BYTES_PER_S
    deadline = Deadline(t + len(message.as_bytes()) / MIN_BYTES_PER_S)
    try:
        with deadline:
            if tls == "ssl":
                smtp = smtplib.SMTP_SSL(timeout=t, context=ssl.create_default_context())
            else:
                smtp = smtplib.SMTP(timeout=t)
            deadline.watch(smtp)  # its socket is cut when the whole session's deadline passes
            with smtp:
                smtp.connect(host, port)
                if tls == "starttls":
                    smtp.starttls(context=ssl.create_default_context())
                    deadline.watch(smtp)  # the TLS socket replaces the plain one
                if o.get("username"):
                    smtp.login(o["username"], password or "")
                refused = smtp.send_message(message)
    except smtplib.SMTPAuthenticationError as exc:
        raise Permanent(f"email {host}:{port}: login refused ({exc.smtp_code})") from None
    except smtplib.SMTPRecipientsRefused as exc:
        codes = [c for c, _ in exc.recipients.values()]
        bad_address = all(is_misconfiguration(c, m) for c, m in exc.recipients.values())
        raise (Permanent if bad_address else Transient)(f"email {host}:{port}: recipient refused {codes}") from None
    except smtplib.SMTPSenderRefused as exc:
        cls = Permanent if is_misconfiguration(exc.smtp_code, exc.smtp_error) else Transient
        raise cls(f"email {host}:{port}: sender refused ({exc.smtp_code})") from None
    except smtplib.SMTPResponseException as exc:
        cls = Permanent if is_misconfiguration(exc.smtp_code, exc.smtp_error) else Transient
        raise cls(f"email {host}:{port}: {exc.smtp_code} {exc.smtp_error[:120]!r}") from None
    except TimeoutError:
        raise Transient(f"email {host}:{port}: no answer within {t:g} s") from None
    except (OSError, smtplib.SMTPException) as exc:
        if deadline.expired:
            raise Transient(f"email {host}:{port}: no complete answer within {t:g} s (the whole session's deadline)") from None
        raise Transient(f"email {host}:{port}: {type(exc).__name__}: {exc}") from None
    if refused:
        raise Transient(f"email {host}:{port}: refused {sorted(refused)}")
    return f"accepted by {host}:{port}"
