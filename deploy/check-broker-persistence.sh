#!/usr/bin/env bash
# Check that the broker really persists: ask it to save now (SIGUSR1), then the database file must
# be fresh. A persistence folder the broker's user cannot write fails only at save time, with one
# line in its log (reliability.md finding 8), so check after every install or config change.
#   sudo bash deploy/check-broker-persistence.sh [DB_FILE]
set -euo pipefail
DB="${1:-/var/lib/mosquitto/mosquitto.db}"
PID="$(systemctl show -p MainPID --value mosquitto)"
if [[ -z "$PID" || "$PID" == 0 ]]; then
    echo "check-broker-persistence: mosquitto is not running (systemctl status mosquitto)" >&2
    exit 1
fi
if ! grep -Rqs '^persistence true' /etc/mosquitto/; then
    echo "check-broker-persistence: no 'persistence true' under /etc/mosquitto/" >&2
    exit 1
fi
before=$(date +%s)
sleep 1
kill -USR1 "$PID"
for _ in $(seq 1 50); do
    if [[ -f "$DB" ]] && (( $(stat -c %Y "$DB") >= before )); then
        echo "broker persistence ok: $DB written $(stat -c %y "$DB") ($(stat -c %s "$DB") bytes)"
        exit 0
    fi
    sleep 0.1
done
echo "check-broker-persistence: $DB was not rewritten after SIGUSR1; is persistence_location writable by user mosquitto?" >&2
journalctl -u mosquitto -n 20 --no-pager 2>/dev/null | grep -i -E 'error|saving' >&2 || true
exit 1
