#!/usr/bin/env bash
# Replay speed, one command: reading alone vs a backtest of two configurations (docs/backtesting.md,
# "Replay speed"). Makes ~10^6 invented demo records, starts an embedded broker on a fresh data folder,
# loads them into a one-partition topic, then runs in turn, RUNS times each (fresh JVM each time):
#   backtest --reading-speed        (read the topic, no configuration: the ceiling)
#   backtest --threads 1            (two configurations on the reading thread: the sequential path)
#   backtest                        (two configurations, default threads: one worker per configuration)
# and writes a Markdown table of the rates and medians to docs/bench/replay-speed.md (and stdout).
# It also checks that the reports of the sequential and the threaded runs are byte-identical.
# Then the same three runs in one warm JVM (dev.runnel.connect.bench.ReplayBenchmark: WARMUP rounds
# not counted, then WARM_ROUNDS rounds), a second table without JIT compilation in the timings.
#
# Usage: docs/bench/replay-speed.sh            (from anywhere; takes a few minutes)
# Settings (environment): DAYS=180 COPIES=5 RUNS=3 PORT=19092 WORK=/tmp/runnel-replay-bench
#                         OUT=docs/bench/replay-speed.md EXTRA="" (more backtest options for every run)
#                         WARMUP=2 WARM_ROUNDS=3 (WARM_ROUNDS=0: no second table)
# Do not run it while a Maven build runs in the same worktree: ./runnel rebuilds the jar when sources change.
set -euo pipefail
root="$(cd "$(dirname "$0")/../.." && pwd)"
cd "$root"
DAYS="${DAYS:-180}"
COPIES="${COPIES:-5}"
RUNS="${RUNS:-3}"
PORT="${PORT:-19092}"
WORK="${WORK:-${TMPDIR:-/tmp}/runnel-replay-bench}"
OUT="${OUT:-docs/bench/replay-speed.md}"
EXTRA="${EXTRA:-}"
WARMUP="${WARMUP:-2}"
WARM_ROUNDS="${WARM_ROUNDS:-3}"
TOPIC=bench.sessions
BS="127.0.0.1:$PORT"
CONFIGS=(--config docs/examples/with-weather.yaml --config docs/examples/no-weather.yaml)

log() { echo "replay-speed: $*" >&2; }

./runnel --version >/dev/null            # builds the jar first if the sources are newer
rm -rf "$WORK"
mkdir -p "$WORK"

log "generating $COPIES copies of $DAYS invented demo days"
java -cp "connectors/target/runnel.jar:connectors/target/lib/*" dev.runnel.demo.DemoDataMain \
  --out "$WORK/days.jsonl" --days "$DAYS" >/dev/null
for _ in $(seq "$COPIES"); do cat "$WORK/days.jsonl"; done > "$WORK/many-days.jsonl"
records=$(wc -l < "$WORK/many-days.jsonl")

log "starting the embedded broker at $BS (data in $WORK/broker)"
./runnel broker --data-dir "$WORK/broker" --port "$PORT" > "$WORK/broker.out" 2>&1 &
broker_pid=$!
stop_broker() {
  if kill -0 "$broker_pid" 2>/dev/null; then
    kill "$broker_pid" 2>/dev/null || true
    wait "$broker_pid" 2>/dev/null || true
  fi
}
trap stop_broker EXIT
for _ in $(seq 180); do
  grep -q "embedded broker ready" "$WORK/broker.out" 2>/dev/null && break
  kill -0 "$broker_pid" 2>/dev/null || { cat "$WORK/broker.out" >&2; log "the broker did not start"; exit 1; }
  sleep 1
done
grep -q "embedded broker ready" "$WORK/broker.out" || { log "the broker was not ready after 180 s"; exit 1; }

log "loading $records records into $TOPIC"
./runnel load --source "$WORK/many-days.jsonl" --topic "$TOPIC" --bootstrap-servers "$BS" >&2

load_before=$(cut -d' ' -f1-3 /proc/loadavg 2>/dev/null || echo "?")
declare -A rates
workers="?"
for run in $(seq "$RUNS"); do
  for mode in read-only threads-1 default; do
    case "$mode" in
      read-only) opts=(--reading-speed) ;;
      threads-1) opts=(--threads 1 --out "$WORK/out-threads-1") ;;
      default)   opts=(--out "$WORK/out-default") ;;
    esac
    # shellcheck disable=SC2086
    text=$(./runnel backtest --source "$TOPIC" --bootstrap-servers "$BS" "${CONFIGS[@]}" --quiet "${opts[@]}" $EXTRA)
    rate=$(printf '%s\n' "$text" | grep -Eo '\([0-9,]+ records/s' | tail -1 | tr -d '(,' | cut -d' ' -f1)
    [ -n "$rate" ] || { printf '%s\n' "$text" >&2; log "no rate in the output of $mode"; exit 1; }
    if [ "$mode" = default ]; then
      w=$(printf '%s\n' "$text" | grep -Eo 'on [0-9]+ worker threads|on one thread' | tail -1)
      workers="${w#on }"
    fi
    rates[$mode]="${rates[$mode]:-} $rate"
    log "run $run, $mode: $rate records/s"
  done
  cmp -s "$WORK/out-threads-1/backtest.json" "$WORK/out-default/backtest.json" \
    || { log "backtest.json differs between --threads 1 and the default threads"; exit 1; }
done
warm=""
if [ "$WARM_ROUNDS" -gt 0 ]; then
  log "the same runs in one warm JVM ($WARMUP warm-up rounds, $WARM_ROUNDS counted)"
  warm=$(java -cp "connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*" dev.runnel.connect.bench.ReplayBenchmark \
    --bootstrap-servers "$BS" --topic "$TOPIC" "${CONFIGS[@]}" --warmup "$WARMUP" --rounds "$WARM_ROUNDS")
fi
load_after=$(cut -d' ' -f1-3 /proc/loadavg 2>/dev/null || echo "?")

median() { tr ' ' '\n' | grep -v '^$' | sort -n | awk '{a[NR]=$1} END {if (NR % 2) print a[(NR+1)/2]; else printf "%.0f\n", (a[NR/2]+a[NR/2+1])/2}'; }
fmt() { printf '%s' "$1" | sed -e ':a' -e 's/\B[0-9]\{3\}\>/,&/' -e 'ta'; }
row() {
  local mode=$1 label=$2 list="" m
  for r in ${rates[$mode]}; do list="$list${list:+ · }$(fmt "$r")"; done
  m=$(printf '%s' "${rates[$mode]}" | median)
  printf '| %s | %s | %s | %s |\n' "$label" "$list" "$(fmt "$m")" \
    "$(awk -v a="$m" -v b="$read_median" 'BEGIN {printf "%.2f", a / b}')"
}
read_median=$(printf '%s' "${rates[read-only]}" | median)
commit=$(git rev-parse --short HEAD 2>/dev/null || echo "?")
git diff --quiet HEAD -- stream-core connectors demo-data 2>/dev/null || commit="$commit (with uncommitted changes)"
{
  echo "<!-- generated by docs/bench/replay-speed.sh; do not edit by hand -->"
  echo "Replay speed, measured $(date -u '+%Y-%m-%d %H:%M') UTC on $(nproc) cores (load average before: $load_before; after: $load_after),"
  echo "commit $commit, $(java -version 2>&1 | head -1 | tr -d '"'), $(fmt "$records") records ($COPIES copies of $DAYS invented demo days,"
  echo "forecasts included) in a one-partition topic of a local embedded broker; $RUNS runs each, fresh JVM each time"
  echo "(JIT warm-up and consumer start-up included). The default run used $workers."
  echo
  echo "| run | records/s ($RUNS runs) | median | share of the reading rate |"
  echo "|---|---|---|---|"
  row read-only '`backtest --reading-speed` (read the topic, no configuration)'
  row threads-1 '`backtest --threads 1`, two configurations on the reading thread (sequential)'
  row default '`backtest`, two configurations, default threads (one worker per configuration)'
  echo
  echo "backtest.json of \`--threads 1\` and of the default threads: byte-identical in every run."
  if [ -n "$warm" ]; then
    echo
    printf '%s\n' "$warm"
  fi
} > "$OUT.tmp"
mv "$OUT.tmp" "$OUT"
cat "$OUT"
