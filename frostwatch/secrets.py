"""Every secret frostwatch reads (passwords, tokens, acknowledgement secrets), read by one rule.

The rule: a secret comes from a systemd credential (a file in ``$CREDENTIALS_DIRECTORY``, which
systemd makes for the unit alone from ``LoadCredential=``) or from a file that only its owner may
read (mode 600 or 400). Anything else is refused with one sentence naming the config key (or
command option) and the file, and how to fix it. A secret is never logged.

    read_secret_file("pw", key="broker.password_file", base=config_dir)   # a *_file key
    read_credential("smtp-password", key="password_credential")           # a *_credential key
    read_secret(channel.options, base, key="password")                    # either, None if neither

Under systemd, a ``*_file`` whose name is also a credential's name is read from the credential
(``LoadCredential=broker-password:/etc/frostwatch/credentials/broker-password`` with
``password_file = ".../broker-password"``), so one config serves both a shell and the service.

`SecretError` is a `UsageError` (the command line prints it and exits 2) and an `OSError` (the
alert channels turn an unreadable secret into a permanent delivery failure).
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from frostwatch.errors import UsageError

CREDENTIALS_ENV = "CREDENTIALS_DIRECTORY"  # set by systemd for a unit with LoadCredential=
OTHERS_MAY_ACCESS = stat.S_IRWXG | stat.S_IRWXO  # any of these bits set: not the owner's alone


class SecretError(UsageError, OSError):
    """A secret that cannot be used: missing, unreadable, or readable by group or others."""

    def __str__(self) -> str:
        return str(self.args[0]) if self.args else ""


def _credentials_dir() -> Path | None:
    d = os.environ.get(CREDENTIALS_ENV)
    return Path(d) if d else None


def _in_credentials_dir(p: Path, cred_dir: Path | None) -> bool:
    if cred_dir is None:
        return False
    try:
        return p.resolve().is_relative_to(cred_dir.resolve())
    except OSError:
        return False


def _read(p: Path, key: str, as_bytes: bool = False) -> str | bytes:
    try:
        return p.read_bytes().strip() if as_bytes else p.read_text(encoding="utf-8").strip()
    except (OSError, UnicodeDecodeError) as exc:
        why = getattr(exc, "strerror", None) or exc
        raise SecretError(f"{key}: cannot read {p}: {why}") from None


def secret_path(path_text: str, base: Path | None = None) -> Path:
    """Where a ``*_file`` value points: ``~`` expanded, relative to `base` (the config's folder)."""
    p = Path(os.path.expanduser(str(path_text)))
    if not p.is_absolute() and base is not None:
        p = Path(base) / p
    return p


def check_owner_only(p: Path, key: str) -> None:
    """Raise SecretError unless the file at `p` exists and only its owner may access it."""
    try:
        mode = p.stat().st_mode
    except OSError as exc:
        raise SecretError(f"{key}: cannot read {p}: {exc.strerror or exc}") from None
    if mode & OTHERS_MAY_ACCESS:
        raise SecretError(
            f"{key}: {p} (mode {stat.S_IMODE(mode):o}) is readable by group or others; chmod 600 it, "
            f"or hand it to the service as a systemd credential (LoadCredential=)")


def read_secret_file(path_text: str, key: str, base: Path | None = None, as_bytes: bool = False) -> str | bytes:
    """The secret in the file a ``*_file`` key names (surrounding whitespace removed; the raw
    bytes with `as_bytes`, else UTF-8 text).

    `key` names the setting for the message (``broker.password_file``, ``--password-file``).
    Read from the systemd credential of the same name when there is one, else from the file,
    which must be readable by its owner only. Raises SecretError.
    """
    p = secret_path(path_text, base)
    cred_dir = _credentials_dir()
    if cred_dir is not None and (cred_dir / p.name).is_file():
        return _read(cred_dir / p.name, key, as_bytes)
    if not _in_credentials_dir(p, cred_dir):
        check_owner_only(p, key)
    return _read(p, key, as_bytes)


def read_credential(name: str, key: str) -> str:
    """The systemd credential `name` (a ``*_credential`` key's value). Raises SecretError when
    ``$CREDENTIALS_DIRECTORY`` is not set or holds no such credential."""
    cred_dir = _credentials_dir()
    if cred_dir is None:
        raise SecretError(f"{key}: credential {name!r} cannot be read: ${CREDENTIALS_ENV} is not set "
                          "(LoadCredential= in the unit provides it)")
    if not name or "/" in name or name in (".", ".."):
        raise SecretError(f"{key}: {name!r} is not a credential name; expected a name such as smtp-password")
    return _read(cred_dir / name, key)


def read_secret(options: dict, base: Path | None = None, key: str = "password", where: str = "") -> str | None:
    """A secret from ``{key}_credential`` or ``{key}_file`` in `options`; None when neither is set.

    `key` is "password" for SMTP and MQTT, "auth_header" for a webhook's Authorization header,
    "ack_secret" for a contact's acknowledgement secret; `where` prefixes the key in messages
    (``channels[2]``). Raises SecretError.
    """
    prefix = f"{where}." if where else ""
    cred, file = options.get(f"{key}_credential"), options.get(f"{key}_file")
    if cred:
        return read_credential(cred, f"{prefix}{key}_credential")
    if file:
        return read_secret_file(file, f"{prefix}{key}_file", base)
    return None
