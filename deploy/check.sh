#!/usr/bin/env bash
# Syntax checks of the deployment files with the tools' own checkers (run by tests/run.sh).
set -uo pipefail
cd "$(dirname "$0")"
fail=0
tmp=$(mktemp -d); trap 'rm -rf "$tmp"' EXIT

# systemd: verify exits 0 on unknown keys, so any output on stderr fails too.
unit="$tmp/silowatch@0.service"
sed 's|^ExecStart=.*|ExecStart=/bin/true|' systemd/silowatch@.service > "$unit"
if ! out=$(systemd-analyze verify "$unit" 2>&1) || [ -n "$out" ]; then
  echo "deploy/systemd/silowatch@.service: $out"; fail=1
fi

# Mosquitto has no test flag: a config it accepts keeps it running (timeout exits 124).
mkdir -p "$tmp/certs"
openssl req -x509 -newkey rsa:2048 -nodes -days 1 -subj "/CN=test-ca" -keyout "$tmp/certs/broker.key" -out "$tmp/certs/broker.crt" >/dev/null 2>&1
cp "$tmp/certs/broker.crt" "$tmp/certs/ca.crt"
touch "$tmp/passwd"; cp mosquitto/silowatch.acl "$tmp/silowatch.acl"
chmod 644 "$tmp"/certs/* "$tmp/passwd" "$tmp/silowatch.acl"; chmod 755 "$tmp" "$tmp/certs"
port=$(python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1])')
sed -e "s|/etc/mosquitto/certs|$tmp/certs|g" -e "s|/etc/mosquitto/passwd|$tmp/passwd|" \
    -e "s|/etc/mosquitto/silowatch.acl|$tmp/silowatch.acl|" -e "s|/var/lib/mosquitto/|$tmp/|" \
    -e "s|^listener 8883|listener $port 127.0.0.1|" -e "s|^listener 1883 127.0.0.1|listener $((port+1)) 127.0.0.1|" \
    mosquitto/silowatch.conf > "$tmp/mosquitto.conf"
timeout 2 mosquitto -c "$tmp/mosquitto.conf" >"$tmp/mq.log" 2>&1; rc=$?
if [ "$rc" -ne 124 ]; then echo "deploy/mosquitto/silowatch.conf rejected (exit $rc):"; cat "$tmp/mq.log"; fail=1; fi

# The cluster manifest must at least be well-formed YAML documents.
python3 - cluster/silowatch-statefulset.yaml <<'PY' || fail=1
import sys
try:
    import yaml
except ImportError:
    sys.exit(0)
list(yaml.safe_load_all(open(sys.argv[1])))
PY

[ $fail -eq 0 ] && echo "deploy: all files accepted by their checkers"
exit $fail
