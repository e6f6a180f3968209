"""One rule for every secret (issue 16): a file only its owner may read, or a systemd credential.

Each reader of a secret in frostwatch is driven through its own entry point (the MQTT ingest and
the fleet uplink building their clients, the email, MQTT and webhook channels, the contacts' and
the install's acknowledgement secrets, the status page token, the fleet command's options): a
secret file of mode 644 is refused with one sentence naming the setting and the file; the same
file at mode 600 is read; a systemd credential ($CREDENTIALS_DIRECTORY) is read whatever its mode.
"""

from __future__ import annotations

import argparse
import dataclasses
import tomllib
from email.message import EmailMessage
from importlib import resources
from pathlib import Path

import pytest

from frostwatch.alerts import acks
from frostwatch.alerts.channels import Permanent, Transient
from frostwatch.alerts.config import Channel, Contact
from frostwatch.config import config_from_dict
from frostwatch.errors import ConfigError, UsageError
from frostwatch.secrets import SecretError, read_credential, read_secret, read_secret_file
from frostwatch.store import Store

SECRET = "a-long-secret-0123456789abcdef"


def _cfg(tmp_path: Path, **sections):
    text = resources.files("frostwatch.sample_logs").joinpath("demo-farm.toml").read_text(encoding="utf-8")
    raw = tomllib.loads(text)
    raw["storage"]["path"] = str(tmp_path / "fw.db")
    for name, values in sections.items():
        raw[name] = {**raw.get(name, {}), **values}
    return config_from_dict(raw, tmp_path / "farm.toml")


def _channel(type_: str, **options) -> Channel:
    return Channel(name=f"{type_}-1", type=type_, timeout_s=2.0, local=False, address="none", options=options)


# each reader: (the setting its message names, a call that reads the secret file `name` in tmp_path)
def _broker_ingest(tmp_path, name):
    from frostwatch.ingest.mqtt import IngestSettings, MqttIngest

    cfg = _cfg(tmp_path, broker={"username": "fw", "password_file": name})
    with Store.open(cfg.storage.path) as store:
        ingest = MqttIngest(cfg, store, IngestSettings())
        return ingest.client.password


def _broker_uplink(tmp_path, name):
    from frostwatch.fleet.uplink import SiteUplink

    cfg = _cfg(tmp_path, broker={"username": "fw", "password_file": name})
    return SiteUplink(cfg).client.password


def _email_channel(tmp_path, name):
    from frostwatch.alerts.channels import email

    ch = _channel("email", host="127.0.0.1", port=1, username="fw", password_file=name)
    try:
        email.send_message(ch, EmailMessage(), tmp_path)
    except Permanent as exc:
        raise SecretError(str(exc)) from None
    raise AssertionError("unreachable: port 1 takes no mail")


def _mqtt_channel(tmp_path, name):
    from frostwatch.alerts.channels import mqtt

    ch = _channel("mqtt", host="127.0.0.1", port=1, topic="farm/siren", username="fw", password_file=name)
    try:
        mqtt.send(ch, None, "*", tmp_path)
    except Permanent as exc:
        raise SecretError(str(exc)) from None
    raise AssertionError("unreachable: port 1 takes no MQTT")


def _webhook_channel(tmp_path, name):
    from frostwatch.alerts.channels.webhook import _auth

    return _auth({"auth_header_file": name}, tmp_path)


def _contact_ack_secret(tmp_path, name):
    cfg = _cfg(tmp_path)
    return acks.contact_secret(cfg, Contact("ana", ("grower",), {}, {"ack_secret_file": name}))


def _install_ack_secret(tmp_path, name):
    cfg = _cfg(tmp_path)
    cfg = dataclasses.replace(cfg, alerts={**(cfg.alerts or {}), "ack_secret_file": name})
    with Store.open(cfg.storage.path) as store:
        return acks.install_secret(store, cfg).decode()


def _status_page_token(tmp_path, name):
    from frostwatch.reports.settings import status_page_settings

    try:
        return status_page_settings(_cfg(tmp_path, status_page={"token_file": name})).token
    except ConfigError as exc:
        raise SecretError(str(exc)) from None


def _fleet_password(tmp_path, name):
    from frostwatch.fleet.listen import read_password

    return read_password(str(tmp_path / name))


def _fleet_token(tmp_path, name):
    from frostwatch.commands.fleet import _token

    return _token(argparse.Namespace(token_file=str(tmp_path / name)))


READERS = {
    "broker.password_file (ingest)": ("broker.password_file", _broker_ingest),
    "broker.password_file (uplink)": ("broker.password_file", _broker_uplink),
    "email channel": ("password_file", _email_channel),
    "mqtt channel": ("password_file", _mqtt_channel),
    "webhook channel": ("auth_header_file", _webhook_channel),
    "contact ack secret": ("ack_secret_file", _contact_ack_secret),
    "install ack secret": ("alerts.ack_secret_file", _install_ack_secret),
    "status page token": ("status_page.token_file", _status_page_token),
    "fleet --password-file": ("--password-file", _fleet_password),
    "fleet --token-file": ("--token-file", _fleet_token),
}


@pytest.fixture(autouse=True)
def _no_systemd(monkeypatch):
    monkeypatch.delenv("CREDENTIALS_DIRECTORY", raising=False)


@pytest.mark.parametrize("reader", READERS)
def test_a_secret_file_of_mode_644_is_refused_naming_the_key_and_the_file(tmp_path, reader):
    key, read = READERS[reader]
    p = tmp_path / "the-secret"
    p.write_text(SECRET + "\n")
    p.chmod(0o644)
    with pytest.raises((SecretError, UsageError, OSError)) as info:
        read(tmp_path, p.name)
    text = str(info.value)
    assert f"{key}: {p} (mode 644) is readable by group or others; chmod 600 it" in text, text


@pytest.mark.parametrize("reader", READERS)
def test_a_secret_file_of_mode_600_is_read(tmp_path, reader):
    _, read = READERS[reader]
    p = tmp_path / "the-secret"
    p.write_text(SECRET + "\n")
    p.chmod(0o600)
    if reader in ("email channel", "mqtt channel"):  # the secret is read, then the connection fails
        with pytest.raises(Transient):  # retried later, unlike an unreadable password (Permanent)
            read(tmp_path, p.name)
        return
    assert read(tmp_path, p.name) == SECRET


@pytest.mark.parametrize("reader", [r for r in READERS if r not in ("email channel", "mqtt channel")])
def test_under_systemd_the_credential_of_the_same_name_is_read_whatever_its_mode(tmp_path, monkeypatch, reader):
    # LoadCredential=broker-password:/etc/... with password_file = ".../broker-password": systemd
    # hands the unit a copy in $CREDENTIALS_DIRECTORY; the file named in the config is not read
    _, read = READERS[reader]
    creds = tmp_path / "creds"
    creds.mkdir()
    (creds / "the-secret").write_text(SECRET + "\n")
    (creds / "the-secret").chmod(0o644)  # the directory is the unit's own: no mode rule inside it
    (tmp_path / "the-secret").write_text("not-this-one-0123456789\n")
    (tmp_path / "the-secret").chmod(0o644)
    monkeypatch.setenv("CREDENTIALS_DIRECTORY", str(creds))
    assert read(tmp_path, "the-secret") == SECRET


def test_a_file_inside_the_credentials_directory_is_read_whatever_its_mode(tmp_path, monkeypatch):
    creds = tmp_path / "creds"
    creds.mkdir()
    (creds / "smtp").write_text(SECRET)
    (creds / "smtp").chmod(0o644)
    monkeypatch.setenv("CREDENTIALS_DIRECTORY", str(creds))
    assert read_secret_file(str(creds / "smtp"), "password_file") == SECRET


def test_credential_keys_read_the_systemd_credential(tmp_path, monkeypatch):
    creds = tmp_path / "creds"
    creds.mkdir()
    (creds / "smtp-password").write_text("s3cret\n")
    (creds / "sms-token").write_text("Bearer xyz\n")
    (creds / "ana-ack").write_text(SECRET + "\n")
    monkeypatch.setenv("CREDENTIALS_DIRECTORY", str(creds))
    from frostwatch.alerts.channels.webhook import _auth

    assert read_secret({"password_credential": "smtp-password"}) == "s3cret"
    assert _auth({"auth_header_credential": "sms-token"}, None) == "Bearer xyz"
    assert _auth({}, tmp_path) is None and read_secret({}) is None  # no secret configured
    contact = Contact("ana", ("grower",), {}, {"ack_secret_credential": "ana-ack"})
    assert acks.contact_secret(_cfg(tmp_path), contact) == SECRET


def test_a_credential_without_systemd_or_missing_is_one_sentence_naming_the_key(tmp_path, monkeypatch):
    with pytest.raises(SecretError, match=r"^password_credential: credential 'smtp' cannot be read: "
                                          r"\$CREDENTIALS_DIRECTORY is not set"):
        read_credential("smtp", "password_credential")
    monkeypatch.setenv("CREDENTIALS_DIRECTORY", str(tmp_path))
    with pytest.raises(SecretError, match=rf"^password_credential: cannot read {tmp_path / 'smtp'}: "):
        read_credential("smtp", "password_credential")
    with pytest.raises(SecretError, match="is not a credential name"):
        read_credential("../etc/passwd", "password_credential")


def test_a_missing_secret_file_names_the_key_and_the_file(tmp_path):
    with pytest.raises(SecretError, match=rf"^broker.password_file: cannot read {tmp_path / 'nope'}: "):
        read_secret_file("nope", "broker.password_file", tmp_path)


def test_a_secret_error_is_a_usage_error_and_an_os_error():
    # the command line prints a UsageError as one sentence (exit 2); the alert channels turn an
    # OSError from a secret into a permanent delivery failure
    assert issubclass(SecretError, UsageError) and issubclass(SecretError, OSError)
    assert str(SecretError("x: y")) == "x: y"
