#!/usr/bin/env bash
# HTTP latency of a series query against a trivial plain-def endpoint of the same app
# (GET /healthz), under uvicorn with one worker, measured with wrk on 127.0.0.1 only.
# Run by hand: bash benchmarks/http.sh   (installs wrk from Debian's packages if missing)
set -euo pipefail
cd "$(dirname "$0")/.."
PORT="${PORT:-8765}"
DURATION="${DURATION:-15s}"
PYTHON="${PYTHON:-python3}"
if ! command -v wrk >/dev/null 2>&1; then
  apt-get update -qq && apt-get install -y -qq wrk >/dev/null
fi
MIXCLOCK_DATA_DIR="$(mktemp -d)" "$PYTHON" -m uvicorn service.app:app --host 127.0.0.1 --port "$PORT" --workers 1 \
  --log-level warning &
server=$!
trap 'kill "$server" 2>/dev/null || true' EXIT
for _ in $(seq 50); do
  if curl -sf "http://127.0.0.1:$PORT/healthz" >/dev/null; then break; fi
  sleep 0.2
done
lua=$(mktemp --suffix .lua)
cat > "$lua" <<'LUA'
wrk.method = "POST"
wrk.headers["Content-Type"] = "application/json"
wrk.body = [[{"body": {"shape": "sphere", "diameter": "3 mm"},
  "medium": {"diffusivity": "6e-10 m^2/s"},
  "initial": {"kind": "uniform", "value": 1},
  "surface": {"kind": "fixed_value", "value": 0},
  "criterion": {"measure": "fraction_equilibrated", "fraction": 0.9}}]]
LUA
curl -sf -X POST "http://127.0.0.1:$PORT/v1/settling-time" -H 'content-type: application/json' \
  -d "$(sed -n 's/^wrk.body = \[\[//; s/\]\]$//; p' "$lua" | tr -d '\n' | sed 's/^.*{"body"/{"body"/')" \
  >/dev/null
echo "== GET /healthz (trivial plain-def endpoint), 1 connection, $DURATION"
wrk -t1 -c1 -d"$DURATION" --latency "http://127.0.0.1:$PORT/healthz" | sed -n '/Latency Distribution/,/99%/p;/Requests\/sec/p'
echo "== POST /v1/settling-time (series), 1 connection, $DURATION"
wrk -t1 -c1 -d"$DURATION" --latency -s "$lua" "http://127.0.0.1:$PORT/v1/settling-time" | sed -n '/Latency Distribution/,/99%/p;/Requests\/sec/p'
stored=$(mktemp --suffix .lua)
sed 's/^wrk.body = \[\[{/wrk.body = [[{"store": true, /' "$lua" > "$stored"
# Storing: unstored and stored runs in turn, so the machine's drift falls on both; what a
# stored answer adds is the difference within each round.
echo "== POST /v1/settling-time (series) without and with \"store\": true, 1 connection, 3 rounds of 5s each"
for round in 1 2 3; do
  for script in "$lua" "$stored"; do
    label=$([ "$script" = "$stored" ] && echo "stored  " || echo "unstored")
    wrk -t1 -c1 -d5s --latency -s "$script" "http://127.0.0.1:$PORT/v1/settling-time" \
      | awk -v label="$label" -v round="$round" \
        '/ 50%/{m=$2} / 99%/{p=$2} /Requests\/sec/{r=$2} END{print "round " round " " label ": median " m ", 99th " p ", " r " answers/s"}'
  done
done
rm -f "$stored"
echo "== POST /v1/settling-time (series), 8 connections, $DURATION"
wrk -t2 -c8 -d"$DURATION" --latency -s "$lua" "http://127.0.0.1:$PORT/v1/settling-time" | sed -n '/Latency Distribution/,/99%/p;/Requests\/sec/p'
rm -f "$lua"
