"""The config's [[channels]]: their types, keys and defaults, each channel checked by its type
(SMTP, webhook, MQTT, command, console), every problem collected as `channels[i].key: ...`."""

from __future__ import annotations

from dataclasses import dataclass

from frostwatch.alerts.channels.template import check_template

CHANNEL_TYPES = ("email", "webhook", "mqtt", "command", "console")
ADDRESS_FIELDS = ("none", "email", "phone", "webhook", "command")
LOCAL_BY_DEFAULT = {"email": False, "webhook": False, "mqtt": True, "command": True, "console": True}
DEFAULT_ADDRESS = {"email": "email", "webhook": "none", "mqtt": "none", "command": "none", "console": "none"}
DEFAULT_TIMEOUT_S = 10.0

_CHANNEL_KEYS = {
    "common": {"name": str, "type": str, "timeout_s": (int, float), "local": bool, "address": str},
    "email": {"host": str, "port": int, "tls": str, "username": str, "password_file": str,
              "password_credential": str, "from": str, "subject_prefix": str},
    "webhook": {"url": str, "method": str, "headers": dict, "body_template": str, "content_type": str,
                "auth_header_file": str, "auth_header_credential": str, "form": str},
    "mqtt": {"host": str, "port": int, "topic": str, "qos": int, "retain": bool, "username": str,
             "password_file": str, "password_credential": str, "payload": str},
    "command": {"argv": list, "form": str},
    "console": {},
}


@dataclass(frozen=True)
class Channel:
    name: str
    type: str
    timeout_s: float
    local: bool
    address: str
    options: dict


def _typed(value, types) -> bool:
    if isinstance(value, bool) and bool not in (types if isinstance(types, tuple) else (types,)):
        return False
    return isinstance(value, types)


def _tname(types) -> str:
    types = types if isinstance(types, tuple) else (types,)
    names = {str: "a string", int: "an integer", float: "a number", bool: "true or false", list: "a list",
             dict: "a table"}
    return " or ".join(names.get(t, t.__name__) for t in types)


def channels_from_config(raw_channels, problems: list[str]) -> list[Channel]:
    """The [[channels]] tables as Channels (the console alone when there is none); each problem is
    appended to `problems` as `channels[i].key: what, expected`."""
    channels: list[Channel] = []
    for i, ch in enumerate(raw_channels):
        where = f"channels[{i}]"
        if not isinstance(ch, dict):
            problems.append(f"{where}: is not a table, expected [[channels]] with name and type")
            continue
        typ = ch.get("type")
        if typ not in CHANNEL_TYPES:
            problems.append(f"{where}.type: {typ!r} is not a channel type, expected one of {', '.join(CHANNEL_TYPES)}")
            continue
        allowed = {**_CHANNEL_KEYS["common"], **_CHANNEL_KEYS[typ]}
        for k, v in ch.items():
            if k not in allowed:
                hint = " (secrets go in password_file or password_credential)" if "pass" in k or "secret" in k or "token" in k else ""
                problems.append(f"{where}.{k}: unknown key for a {typ} channel{hint}, expected one of {', '.join(sorted(allowed))}")
            elif not _typed(v, allowed[k]):
                problems.append(f"{where}.{k}: {v!r} is not {_tname(allowed[k])}, expected {_tname(allowed[k])}")
        name = ch.get("name", typ)
        if not isinstance(name, str) or not name:
            name = typ
        if any(x.name == name for x in channels):
            problems.append(f"{where}.name: {name!r} is used twice, expected unique channel names")
        timeout = ch.get("timeout_s", DEFAULT_TIMEOUT_S)
        if not _typed(timeout, (int, float)) or not (0 < timeout <= 120):
            problems.append(f"{where}.timeout_s: {timeout!r} is out of range, expected seconds in (0, 120]")
            timeout = DEFAULT_TIMEOUT_S
        address = ch.get("address", DEFAULT_ADDRESS[typ])
        if address not in ADDRESS_FIELDS:
            problems.append(f"{where}.address: {address!r} is not a contact field, expected one of {', '.join(ADDRESS_FIELDS)}")
            address = DEFAULT_ADDRESS[typ]
        _check_channel(typ, ch, where, problems)
        opts = {k: v for k, v in ch.items() if k not in ("name", "type", "timeout_s", "local", "address")}
        local = ch.get("local", LOCAL_BY_DEFAULT[typ])
        channels.append(Channel(name, typ, float(timeout), bool(local), address, opts))
    if not channels:
        channels.append(Channel("console", "console", DEFAULT_TIMEOUT_S, True, "none", {}))
    return channels


def _check_channel(typ: str, ch: dict, where: str, problems: list[str]) -> None:
    if typ == "email":
        for k in ("host", "from"):
            if not isinstance(ch.get(k), str) or not ch.get(k):
                problems.append(f"{where}.{k}: missing, expected the SMTP {'server name' if k == 'host' else 'sender address'}")
        tls = ch.get("tls", "starttls")
        if tls not in ("starttls", "ssl", "none"):
            problems.append(f"{where}.tls: {tls!r} is not a mode, expected starttls, ssl or none")
        if "password_file" in ch and "password_credential" in ch:
            problems.append(f"{where}.password_file: both password_file and password_credential given, expected one")
    elif typ == "webhook":
        url = ch.get("url")
        if not isinstance(url, str) or not url.startswith(("http://", "https://")):
            problems.append(f"{where}.url: {url!r} is not an http(s) URL, expected e.g. \"https://gateway.example/send\"")
        if ch.get("method", "POST") not in ("POST", "PUT"):
            problems.append(f"{where}.method: {ch.get('method')!r} is not supported, expected POST or PUT")
        headers = ch.get("headers", {})
        if isinstance(headers, dict):
            for hk in headers:
                if hk.lower() in ("authorization", "x-api-key"):
                    problems.append(f"{where}.headers.{hk}: a secret in the config, expected auth_header_file "
                                    f"(a file holding the header value) or auth_header_credential")
        tmpl = ch.get("body_template")
        if isinstance(tmpl, str):
            err = check_template(tmpl)
            if err:
                problems.append(f"{where}.body_template: {err}")
    elif typ == "mqtt":
        if not isinstance(ch.get("topic"), str) or not ch.get("topic"):
            problems.append(f"{where}.topic: missing, expected the siren or relay topic (e.g. \"farm/siren\", outside the readings prefix)")
        if ch.get("qos", 1) not in (0, 1, 2):
            problems.append(f"{where}.qos: {ch.get('qos')!r} is not 0, 1 or 2, expected 1")
        if ch.get("payload", "json") not in ("json", "text", "on"):
            problems.append(f"{where}.payload: {ch.get('payload')!r} is not a payload form, expected json, text or on")
    if typ in ("webhook", "command") and ch.get("form", "short") not in ("short", "long"):
        problems.append(f"{where}.form: {ch.get('form')!r} is not a form, expected short (one text message, the "
                        "default) or long (the full message)")
    if typ == "command":
        argv = ch.get("argv")
        if not isinstance(argv, list) or not argv or not all(isinstance(a, str) for a in argv):
            problems.append(f"{where}.argv: {argv!r} is not a command, expected a list like [\"/usr/bin/sms-send\", \"{{to}}\"]")
