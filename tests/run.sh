#!/usr/bin/env bash
# Runs every test of SiloWatch on a fresh machine: installs the servers the tests need (Debian
# packages), starts them on free loopback ports, runs `dotnet test`, stops the servers and ends
# with the line "N passed, N failed[, N skipped]".
set -uo pipefail
cd "$(dirname "$0")/.."
ROOT=$(pwd)

need_pkgs=()
command -v mosquitto >/dev/null 2>&1 || [ -x /usr/sbin/mosquitto ] || need_pkgs+=(mosquitto)
command -v mosquitto_pub >/dev/null 2>&1 || need_pkgs+=(mosquitto-clients)
command -v victoria-metrics >/dev/null 2>&1 || [ -x /usr/bin/victoria-metrics ] || need_pkgs+=(victoria-metrics)
[ -d /usr/share/fonts/truetype/dejavu ] || need_pkgs+=(fonts-dejavu-core)
command -v openssl >/dev/null 2>&1 || need_pkgs+=(openssl)
command -v curl >/dev/null 2>&1 || need_pkgs+=(curl)
command -v chromium >/dev/null 2>&1 || need_pkgs+=(chromium)
if [ ${#need_pkgs[@]} -gt 0 ]; then
  echo "tests/run.sh: installing ${need_pkgs[*]}"
  SUDO=""; [ "$(id -u)" -ne 0 ] && SUDO="sudo"
  $SUDO apt-get update -qq && DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq "${need_pkgs[@]}" >/dev/null || {
    echo "tests/run.sh: could not install ${need_pkgs[*]}"; echo "0 passed, 1 failed"; exit 1; }
fi
export PATH="$PATH:/usr/sbin"

free_port() { python3 -c 'import socket; s=socket.socket(); s.bind(("127.0.0.1",0)); print(s.getsockname()[1]); s.close()'; }

WORK=$(mktemp -d /tmp/silowatch-tests.XXXXXX)
chmod 755 "$WORK"
PIDS=()
cleanup() {
  for p in "${PIDS[@]}"; do kill "$p" 2>/dev/null; done
  wait 2>/dev/null
  rm -rf "$WORK"
}
trap cleanup EXIT

# Mosquitto: anonymous on loopback, persistence on, the throughput settings from ARCHITECTURE.md.
MQTT_PORT=$(free_port)
mkdir -p "$WORK/mosquitto" && chown mosquitto "$WORK/mosquitto" 2>/dev/null
cat > "$WORK/mosquitto.conf" <<CONF
listener $MQTT_PORT 127.0.0.1
allow_anonymous true
persistence true
persistence_location $WORK/mosquitto/
set_tcp_nodelay true
max_queued_messages 0
max_inflight_messages 0
CONF
mosquitto -c "$WORK/mosquitto.conf" >"$WORK/mosquitto.log" 2>&1 &
PIDS+=($!)

# VictoriaMetrics: takes the InfluxDB v2 write path; read back through /api/v1/export. With
# -dedup.minScrapeInterval=1ms a point written again (same series and timestamp) is kept once,
# which makes a replay after a restart idempotent, as in InfluxDB.
VM_PORT=$(free_port)
victoria-metrics -httpListenAddr=127.0.0.1:$VM_PORT -storageDataPath="$WORK/vm" -search.latencyOffset=1s -dedup.minScrapeInterval=1ms \
  -retentionPeriod=100y >"$WORK/vm.log" 2>&1 &
PIDS+=($!)

for i in $(seq 1 100); do
  (echo > /dev/tcp/127.0.0.1/$MQTT_PORT) 2>/dev/null && curl -sf "http://127.0.0.1:$VM_PORT/health" >/dev/null 2>&1 && break
  sleep 0.1
done
(echo > /dev/tcp/127.0.0.1/$MQTT_PORT) 2>/dev/null || { cat "$WORK/mosquitto.log"; echo "tests/run.sh: mosquitto did not start"; echo "0 passed, 1 failed"; exit 1; }
curl -sf "http://127.0.0.1:$VM_PORT/health" >/dev/null || { cat "$WORK/vm.log"; echo "tests/run.sh: victoria-metrics did not start"; echo "0 passed, 1 failed"; exit 1; }

# Tests that need a server read these; with SILOWATCH_REQUIRE_SERVERS=1 a missing one fails the test.
export SILOWATCH_TEST_MQTT_PORT=$MQTT_PORT
export SILOWATCH_TEST_VM_URL="http://127.0.0.1:$VM_PORT"
export SILOWATCH_TEST_MOSQUITTO_BIN=$(command -v mosquitto)
export SILOWATCH_TEST_VM_BIN=$(command -v victoria-metrics)
export SILOWATCH_TEST_CHROMIUM=$(command -v chromium)
export SILOWATCH_REQUIRE_SERVERS=1
export DOTNET_CLI_TELEMETRY_OPTOUT=1 DOTNET_NOLOGO=1

RESULTS="$WORK/results"
dotnet test "$ROOT/SiloWatch.sln" -c Release --logger "trx;LogFilePrefix=run" --results-directory "$RESULTS" "$@"
rc=$?

# Sum the counters of every project's TRX file (dotnet test's own summary is per project).
read -r passed failed skipped < <(cat "$RESULTS"/*.trx 2>/dev/null | grep -o '<Counters [^>]*>' \
  | sed -E 's/.*total="([0-9]+)".*executed="([0-9]+)".*passed="([0-9]+)".*failed="([0-9]+)".*/\1 \2 \3 \4/' \
  | awk '{t+=$1; e+=$2; p+=$3; f+=$4} END {print p+0, f+0, t-e+0}')
if [ "$rc" -ne 0 ] && [ "$failed" -eq 0 ]; then failed=1; fi   # build error or crashed test host

# The deployment files, checked by their own tools (systemd-analyze, mosquitto), count as one test.
if "$ROOT/deploy/check.sh"; then passed=$((passed + 1)); else failed=$((failed + 1)); rc=1; fi
line="$passed passed, $failed failed"
[ "$skipped" -gt 0 ] && line="$line, $skipped skipped"
echo "$line"
exit $rc
