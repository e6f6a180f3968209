#!/usr/bin/env bash
# Install frostwatch as a service on Raspberry Pi OS / Debian 12 (bookworm). Run as root from a
# checkout of the project:   sudo bash deploy/install.sh
# Idempotent: run it again to upgrade; an existing config, password or store is never replaced.
#
# With no options it installs into / for real (the Pi). For a trial install (CI, or a look before
# touching a Pi) the options below install into a throwaway folder instead:
#   --root DIR      install everything under DIR instead of / ; the config, the unit and the
#                   broker files then point inside DIR, so the installed program runs there
#   --user NAME     the service user (default frostwatch); with --root, a user this machine does
#                   not have is made in DIR/etc/passwd only (useradd --prefix)
#   --config PATH   where the config goes (default ROOT/etc/frostwatch/frostwatch.toml)
#   --wheel FILE    install this wheel instead of one built from the checkout
#   --skip STEPS    comma-separated steps not to run: apt (packages), user, broker (its files and
#                   password), systemctl (every systemctl call: the broker and service restarts
#                   and the checks that need them)
# Each step says whether it ran; the summary at the end lists the steps skipped and why.
set -euo pipefail

SRC="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
ROOT=""
USER_NAME=frostwatch
CONFIG=""
WHEEL=""
SKIP=""

usage() { sed -n '2,17p' "${BASH_SOURCE[0]}" | sed 's/^# \{0,1\}//'; }
while [[ $# -gt 0 ]]; do
    case "$1" in
        --root) ROOT="${2:?--root needs a folder}"; shift 2 ;;
        --user) USER_NAME="${2:?--user needs a name}"; shift 2 ;;
        --config) CONFIG="${2:?--config needs a path}"; shift 2 ;;
        --wheel) WHEEL="${2:?--wheel needs a file}"; shift 2 ;;
        --skip) SKIP="${2:?--skip needs a list of steps}"; shift 2 ;;
        -h|--help) usage; exit 0 ;;
        *) echo "install.sh: unknown option $1 (see --help)" >&2; exit 2 ;;
    esac
done
for s in ${SKIP//,/ }; do
    case "$s" in
        apt|user|broker|systemctl) ;;
        *) echo "install.sh: --skip $s: no such step (apt, user, broker, systemctl)" >&2; exit 2 ;;
    esac
done
if [[ -n "$ROOT" ]]; then
    mkdir -p "$ROOT"
    ROOT="$(cd "$ROOT" && pwd)"
fi
if [[ -n "$WHEEL" ]]; then
    [[ -f "$WHEEL" ]] || { echo "install.sh: --wheel $WHEEL: no such file" >&2; exit 2; }
    WHEEL="$(cd "$(dirname "$WHEEL")" && pwd)/$(basename "$WHEEL")"
fi

PREFIX="$ROOT/opt/frostwatch"
ETC="$ROOT/etc/frostwatch"
STATE="$ROOT/var/lib/frostwatch"
MOSQ="$ROOT/etc/mosquitto"
UNIT_DIR="$ROOT/etc/systemd/system"
CONFIG="${CONFIG:-$ETC/frostwatch.toml}"
[[ "$CONFIG" = /* ]] || CONFIG="$PWD/$CONFIG"

if [[ $EUID -ne 0 && -z "$ROOT" ]]; then
    echo "install.sh: run as root (sudo bash deploy/install.sh)" >&2
    exit 2
fi

RAN=()
SKIPPED=()
ran() { RAN+=("$1"); }
skipped() { SKIPPED+=("$1 ($2)"); echo "== $1: skipped ($2)"; }
wanted() { [[ ",$SKIP," != *",$1,"* ]]; }

# uid:gid of a user, from this machine or, with --root, from ROOT/etc/passwd
ids_of() {
    if id -u "$1" >/dev/null 2>&1; then
        echo "$(id -u "$1"):$(id -g "$1")"
    elif [[ -n "$ROOT" && -f "$ROOT/etc/passwd" ]]; then
        awk -F: -v u="$1" '$1 == u { print $3 ":" $4 }' "$ROOT/etc/passwd"
    fi
}

if wanted apt; then
    echo "== packages: mosquitto (broker), python3-venv"
    apt-get update
    apt-get install -y --no-install-recommends mosquitto mosquitto-clients python3-venv python3-pip sqlite3
    mosquitto -h | head -1 || true
    ran apt
else
    skipped apt "--skip apt: mosquitto, python3-venv and sqlite3 must be installed already"
fi

if wanted user; then
    echo "== system user $USER_NAME"
    if [[ -n "$(ids_of "$USER_NAME")" ]]; then
        echo "   $USER_NAME exists"
    elif [[ -n "$ROOT" ]]; then
        install -d -m 0755 "$ROOT/etc"
        for f in passwd group shadow gshadow; do [[ -f "$ROOT/etc/$f" ]] || touch "$ROOT/etc/$f"; done
        useradd --prefix "$ROOT" --system --user-group --home-dir "$STATE" --no-create-home \
            --shell /usr/sbin/nologin "$USER_NAME"
        echo "   made $USER_NAME in $ROOT/etc/passwd only (not on this machine)"
    else
        useradd --system --home-dir "$STATE" --no-create-home --shell /usr/sbin/nologin "$USER_NAME"
    fi
    ran user
else
    skipped user "--skip user: the state folder is owned by whoever runs this"
fi
OWNER="$(ids_of "$USER_NAME")"
GROUP_NAME="$USER_NAME"
if id -u "$USER_NAME" >/dev/null 2>&1; then GROUP_NAME="$(id -gn "$USER_NAME")"; fi
if [[ -z "$OWNER" || $EUID -ne 0 ]]; then
    echo "   the state folder will be owned by $(id -un): $USER_NAME unknown here, or not root"
    OWNER="$(id -u):$(id -g)"
fi

echo "== program in $PREFIX (a virtual environment)"
install -d -m 0755 "$PREFIX"
rm -rf "$PREFIX/src.new"
mkdir "$PREFIX/src.new"
# the checkout without its git history, virtual environments and build leftovers
tar -C "$SRC" -cf - --exclude=./.git --exclude='./.venv*' --exclude=./build --exclude=./dist \
    --exclude='*.egg-info' --exclude=__pycache__ --exclude=.pytest_cache --exclude=.hypothesis \
    --exclude=.ruff_cache . | tar -C "$PREFIX/src.new" -xf -
rm -rf "$PREFIX/src" && mv "$PREFIX/src.new" "$PREFIX/src"
[[ -x "$PREFIX/venv/bin/python" ]] || python3 -m venv "$PREFIX/venv"
PKG="${WHEEL:-$PREFIX/src}"
"$PREFIX/venv/bin/pip" install --upgrade --quiet "$PKG"
# the same version number may carry new code (a development build): install this very build
"$PREFIX/venv/bin/pip" install --force-reinstall --no-deps --quiet "$PKG"
echo "   $("$PREFIX/venv/bin/frostwatch" --version) from ${WHEEL:-the checkout}"
install -d -m 0755 "$PREFIX/deploy"
cp -a "$SRC/deploy/." "$PREFIX/deploy/"
ran program

echo "== config in $CONFIG"
install -d -m 0755 "$ETC" "$(dirname "$CONFIG")"
install -d -m 0700 "$ETC/credentials"
if [[ ! -f "$ETC/credentials/broker-password" ]]; then
    umask 077
    head -c 24 /dev/urandom | base64 | tr -d '/+=' > "$ETC/credentials/broker-password"
    umask 022
fi
chmod 0600 "$ETC/credentials/broker-password"
if [[ ! -f "$CONFIG" ]]; then
    "$PREFIX/venv/bin/frostwatch" init "$CONFIG" >/dev/null
    sed -i \
        -e 's|^path = "frostwatch.db".*|path = "'"$STATE"'/frostwatch.db"   # the service'"'"'s StateDirectory|' \
        -e '/^\[broker\]/,/^\[/ s|^# username = "frostwatch".*|username = "frostwatch"|' \
        -e '/^\[broker\]/,/^\[/ s|^# password_file = .*|password_file = "'"$ETC"'/credentials/broker-password"   # read via LoadCredential=|' \
        "$CONFIG"
    for want in "path = \"$STATE/frostwatch.db\"" 'username = "frostwatch"' \
                "password_file = \"$ETC/credentials/broker-password\""; do
        if ! grep -qF "$want" "$CONFIG"; then
            echo "install.sh: could not set '$want' in $CONFIG: frostwatch init's example has changed" >&2
            exit 1
        fi
    done
    echo "   wrote an EXAMPLE config for an invented farm: edit $CONFIG (site, blocks, stations)"
else
    echo "   $CONFIG exists: kept as it is"
fi
chmod 0644 "$CONFIG"
ran config

echo "== state in $STATE"
install -d -m 0750 -o "${OWNER%%:*}" -g "${OWNER##*:}" "$STATE"
echo "   owned by uid:gid $OWNER"
ran state

if wanted broker; then
    echo "== broker: persistence, queue limits, password auth"
    install -d -m 0755 "$MOSQ/conf.d"
    sed -e "s|/etc/mosquitto/|$MOSQ/|g" "$SRC/deploy/mosquitto/frostwatch.conf" > "$MOSQ/conf.d/frostwatch.conf"
    chmod 0644 "$MOSQ/conf.d/frostwatch.conf"
    install -m 0644 "$SRC/deploy/mosquitto/frostwatch.acl" "$MOSQ/frostwatch.acl"
    touch "$MOSQ/frostwatch.passwd"
    if [[ $EUID -eq 0 ]] && getent group mosquitto >/dev/null; then
        chown root:mosquitto "$MOSQ/frostwatch.passwd"
    else
        echo "   $MOSQ/frostwatch.passwd left owned by $(id -un): no group mosquitto here, or not root"
    fi
    chmod 0640 "$MOSQ/frostwatch.passwd"
    mosquitto_passwd -b "$MOSQ/frostwatch.passwd" frostwatch "$(cat "$ETC/credentials/broker-password")"
    # the persistence folder must be writable by the broker's user, or it fails only at save time
    if [[ $EUID -eq 0 ]] && id -u mosquitto >/dev/null 2>&1; then
        install -d -o mosquitto -g mosquitto -m 0750 "$ROOT/var/lib/mosquitto"
    else
        install -d -m 0750 "$ROOT/var/lib/mosquitto"
        echo "   $ROOT/var/lib/mosquitto left owned by $(id -un): no user mosquitto here, or not root"
    fi
    ran broker
else
    skipped broker "--skip broker: the broker's config, ACL and password file are not installed"
fi
if wanted systemctl; then
    systemctl enable mosquitto
    systemctl restart mosquitto
    ran broker-restart
else
    skipped broker-restart "--skip systemctl: mosquitto not enabled or restarted"
fi

echo "== service units in $UNIT_DIR"
install -d -m 0755 "$UNIT_DIR"
# the units as shipped (the daemon, and the status page as a process of its own); only the
# paths, the user and the config move with the options
for unit in frostwatch.service frostwatch-status-page.service; do
    sed -e "s|=/opt/frostwatch/|=$PREFIX/|" \
        -e "s|file:///opt/frostwatch/|file://$PREFIX/|" \
        -e "s| --config /etc/frostwatch/frostwatch.toml\$| --config $CONFIG|" \
        -e "s|:/etc/frostwatch/credentials/|:$ETC/credentials/|" \
        -e "s|^User=frostwatch\$|User=$USER_NAME|" \
        -e "s|^Group=frostwatch\$|Group=$GROUP_NAME|" \
        "$SRC/systemd/$unit" > "$UNIT_DIR/$unit"
    chmod 0644 "$UNIT_DIR/$unit"
done
ran unit

echo "== check-config"
"$PREFIX/venv/bin/frostwatch" check-config --config "$CONFIG" >/dev/null
echo "   $CONFIG: ok"
ran check-config

if wanted systemctl; then
    echo "== service"
    systemctl daemon-reload
    systemctl enable frostwatch.service frostwatch-status-page.service
    systemctl restart frostwatch.service frostwatch-status-page.service
    ran service

    echo "== checks"
    bash "$SRC/deploy/check-broker-persistence.sh" || echo "   WARNING: the broker persistence check failed; see deploy/README.md"
    systemctl --no-pager status frostwatch.service | head -5 || true
    ran checks
else
    skipped service "--skip systemctl: frostwatch.service and frostwatch-status-page.service not enabled or started"
    skipped checks "--skip systemctl: the broker persistence check needs the broker running under systemd"
fi

echo
echo "== summary"
echo "   ran: ${RAN[*]}"
for s in "${SKIPPED[@]}"; do echo "   skipped $s"; done
echo
echo "Done. Sensors publish to frostwatch/STATION/QUANTITY with a broker user per station:"
echo "   sudo mosquitto_passwd $MOSQ/frostwatch.passwd STATION && sudo systemctl reload mosquitto"
echo "Live state:  $PREFIX/venv/bin/frostwatch status --config $CONFIG  (or the status page, port 8470)"
echo "Logs:        journalctl -u frostwatch -f"
