"""Channel secrets come from a file or a systemd credential, never from the config itself."""

from frostwatch.alerts.channels.webhook import _auth
from frostwatch.alerts.config import read_secret


def test_webhook_auth_header_from_a_file_relative_to_the_config(tmp_path):
    (tmp_path / "sms-token").write_text("Bearer abc123\n")
    assert _auth({"auth_header_file": "sms-token"}, tmp_path) == "Bearer abc123"
    assert _auth({}, tmp_path) is None


def test_secrets_from_a_systemd_credential(tmp_path, monkeypatch):
    creds = tmp_path / "creds"
    creds.mkdir()
    (creds / "smtp-password").write_text("s3cret\n")
    (creds / "sms-token").write_text("Bearer xyz\n")
    monkeypatch.setenv("CREDENTIALS_DIRECTORY", str(creds))
    assert read_secret({"password_credential": "smtp-password"}) == "s3cret"
    assert _auth({"auth_header_credential": "sms-token"}, None) == "Bearer xyz"
