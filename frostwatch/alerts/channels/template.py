"""The webhook body template: its placeholders, rendering and validation (pure, no network).

`body_template` holds {key}, {seq}, {idempotency_key}, {level}, {rank}, {block}, {to}, {title},
{message}, {ack_url}, {code}, {short} and {long}; each is replaced by `render`, JSON-escaped when
the content type is JSON. `check_template` is what `[[channels]] body_template` validation uses.
"""

from __future__ import annotations

import json
import re

DEFAULT_WEBHOOK_BODY = (
    '{"key": "{key}", "level": "{level}", "rank": {rank}, "block": "{block}", "to": "{to}", '
    '"title": "{title}", "message": "{message}", "ack_url": "{ack_url}"}'
)

FIELDS = ("key", "seq", "idempotency_key", "level", "rank", "block", "to", "title", "message", "ack_url", "code",
          "short", "long")
_PLACEHOLDER = re.compile(r"\{([a-z_]+)\}")


def render(template: str, values: dict, as_json: bool) -> str:
    def sub(m: re.Match) -> str:
        name = m.group(1)
        if name not in values:
            return m.group(0)
        v = str(values[name])
        return json.dumps(v)[1:-1] if as_json else v
    return _PLACEHOLDER.sub(sub, template)


def check_template(template: str, content_type: str = "application/json") -> str | None:
    """None if the template is usable, else what is wrong (for config validation)."""
    unknown = sorted({n for n in _PLACEHOLDER.findall(template) if n not in FIELDS})
    if unknown:
        return f"unknown placeholder {unknown}, expected some of {', '.join('{' + f + '}' for f in FIELDS)}"
    if "json" in content_type:
        sample = {f: 'x"\n\\y' if f not in ("rank", "seq") else "1" for f in FIELDS}
        try:
            json.loads(render(template, sample, True))
        except ValueError as exc:
            return f"does not render to valid JSON ({exc}), expected a JSON template such as {DEFAULT_WEBHOOK_BODY}"
    return None
