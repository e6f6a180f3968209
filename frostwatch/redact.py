"""Secrets out of every log line and stored detail (issue 18, item 7).

A webhook URL may carry its gateway token in the query string (`?api_key=...`). Our own messages
name URLs without it, but libraries do not: urllib3 logs "Failed to parse headers (url=...)" with
the whole URL, and a warning or an exception text can quote it too. `redact` removes the value of
every query parameter from a text; `RedactingFilter` applies it to every record a log handler
emits (the daemon installs it on its handler, and Python warnings are routed through logging).
"""

from __future__ import annotations

import logging
import re

# a URL's query string: everything from '?' up to whitespace or a quote
_QUERY = re.compile(r"\?([^\s'\"<>()]+?)([.,:;]*)(?=[\s'\"<>()]|$)")
# name=value pairs of likely secrets outside a URL (e.g. "api_key=abc" in an exception text)
_SECRET_PAIR = re.compile(r"(?i)\b((?:api[_-]?key|token|secret|password|passwd|auth|key|sig|signature)=)[^\s&'\"<>]+")

REDACTED = "<redacted>"


def redact(text: str) -> str:
    """`text` with every URL query string and every secret-looking name=value cut out."""
    if not text or ("?" not in text and "=" not in text):
        return text
    text = _QUERY.sub(lambda m: "?" + REDACTED + m.group(2), text)
    return _SECRET_PAIR.sub(lambda m: m.group(1) + REDACTED, text)


class RedactingFilter(logging.Filter):
    """A handler filter: the record's message (and exception text) with secrets redacted."""

    def filter(self, record: logging.LogRecord) -> bool:
        try:
            msg = record.getMessage()
        except Exception:  # noqa: BLE001 - a broken format string is logged as it is
            return True
        clean = redact(msg)
        if clean != msg:
            record.msg, record.args = clean, None
        if record.exc_info and record.exc_info[1] is not None:
            text = logging.Formatter().formatException(record.exc_info)
            if redact(text) != text:
                record.exc_text = redact(text)
        elif record.exc_text:
            record.exc_text = redact(record.exc_text)
        return True


def install(handler: logging.Handler) -> None:
    """Redact every record `handler` emits, and route Python warnings through logging."""
    handler.addFilter(RedactingFilter())
    logging.captureWarnings(True)
