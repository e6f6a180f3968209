#!/usr/bin/env bash
# Install frostwatch as a service on Raspberry Pi OS / Debian 12 (bookworm). Run as root from a
# checkout of the project:   sudo bash deploy/install.sh
# Idempotent: run it again to upgrade; an existing config, password or store is never replaced.
set -euo pipefail

SRC="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
PREFIX=/opt/frostwatch
ETC=/etc/frostwatch
STATE=/var/lib/frostwatch
USER_NAME=frostwatch

if [[ $EUID -ne 0 ]]; then
    echo "install.sh: run as root (sudo bash deploy/install.sh)" >&2
    exit 2
fi

echo "== packages: mosquitto (broker), python3-venv"
apt-get update
apt-get install -y --no-install-recommends mosquitto mosquitto-clients python3-venv python3-pip sqlite3
mosquitto -h | head -1 || true

echo "== system user $USER_NAME"
if ! id -u "$USER_NAME" >/dev/null 2>&1; then
    useradd --system --home-dir "$STATE" --no-create-home --shell /usr/sbin/nologin "$USER_NAME"
fi

echo "== program in $PREFIX (a virtual environment)"
install -d -m 0755 "$PREFIX"
rm -rf "$PREFIX/src.new"
cp -a "$SRC" "$PREFIX/src.new"
rm -rf "$PREFIX/src" && mv "$PREFIX/src.new" "$PREFIX/src"
[[ -x "$PREFIX/venv/bin/python" ]] || python3 -m venv "$PREFIX/venv"
"$PREFIX/venv/bin/pip" install --upgrade --quiet "$PREFIX/src"
install -d -m 0755 "$PREFIX/deploy"
cp -a "$SRC/deploy/." "$PREFIX/deploy/"

echo "== config in $ETC"
install -d -m 0755 "$ETC"
install -d -m 0700 "$ETC/credentials"
if [[ ! -f "$ETC/credentials/broker-password" ]]; then
    umask 077
    head -c 24 /dev/urandom | base64 | tr -d '/+=' > "$ETC/credentials/broker-password"
    umask 022
fi
chmod 0600 "$ETC/credentials/broker-password"
if [[ ! -f "$ETC/frostwatch.toml" ]]; then
    "$PREFIX/venv/bin/frostwatch" init "$ETC/frostwatch.toml"
    sed -i \
        -e 's|^path = "frostwatch.db".*|path = "/var/lib/frostwatch/frostwatch.db"   # the service'"'"'s StateDirectory|' \
        -e 's|^# username = "frostwatch"|username = "frostwatch"|' \
        -e 's|^# password_file = .*|password_file = "/etc/frostwatch/credentials/broker-password"   # read via LoadCredential=|' \
        "$ETC/frostwatch.toml"
    echo "   wrote an EXAMPLE config for an invented farm: edit $ETC/frostwatch.toml (site, blocks, stations)"
fi
chmod 0644 "$ETC/frostwatch.toml"

echo "== state in $STATE"
install -d -m 0750 -o "$USER_NAME" -g "$USER_NAME" "$STATE"

echo "== broker: persistence, queue limits, password auth"
install -m 0644 "$SRC/deploy/mosquitto/frostwatch.conf" /etc/mosquitto/conf.d/frostwatch.conf
install -m 0644 "$SRC/deploy/mosquitto/frostwatch.acl" /etc/mosquitto/frostwatch.acl
touch /etc/mosquitto/frostwatch.passwd
chown root:mosquitto /etc/mosquitto/frostwatch.passwd
chmod 0640 /etc/mosquitto/frostwatch.passwd
mosquitto_passwd -b /etc/mosquitto/frostwatch.passwd frostwatch "$(cat "$ETC/credentials/broker-password")"
# the persistence folder must be writable by the broker's user, or it fails only at save time
install -d -o mosquitto -g mosquitto -m 0750 /var/lib/mosquitto
systemctl enable mosquitto
systemctl restart mosquitto

echo "== service"
install -m 0644 "$SRC/systemd/frostwatch.service" /etc/systemd/system/frostwatch.service
systemctl daemon-reload
"$PREFIX/venv/bin/frostwatch" check-config --config "$ETC/frostwatch.toml" >/dev/null
systemctl enable frostwatch.service
systemctl restart frostwatch.service

echo "== checks"
bash "$SRC/deploy/check-broker-persistence.sh" || echo "   WARNING: the broker persistence check failed; see deploy/README.md"
systemctl --no-pager status frostwatch.service | head -5 || true
echo
echo "Done. Sensors publish to frostwatch/STATION/QUANTITY with a broker user per station:"
echo "   sudo mosquitto_passwd /etc/mosquitto/frostwatch.passwd STATION && sudo systemctl reload mosquitto"
echo "Live state:  $PREFIX/venv/bin/frostwatch status --config $ETC/frostwatch.toml"
echo "Logs:        journalctl -u frostwatch -f"
