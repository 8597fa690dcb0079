#!/usr/bin/env bash
# What the copy to temporary files costs a backtest with model.scope: global (docs/performance.md,
# "The copy of a global-scope backtest"): ~10^6 invented demo records as a 4-partition recording
# (partition = hub number - 1 mod 4, Kafka timestamps 1 s apart in file order), then, alternating in
# one session, RUNS backtests of the demo configuration with model.scope: partition (read straight
# from the file) and RUNS with model.scope: global (copied to one temporary file per partition, then
# merged), one configuration each, fresh JVM each time. Prints each run's wall and CPU time, the copy's own
# line (records, rate, bytes, ratio to the source) and the load average before each run.
#
# Usage: docs/bench/global-spill.sh   Settings: DAYS=1130 RUNS=3 WORK=/tmp/runnel-global-spill
set -euo pipefail
root="$(cd "$(dirname "$0")/../.." && pwd)"
cd "$root"
DAYS="${DAYS:-1130}"
RUNS="${RUNS:-3}"
WORK="${WORK:-${TMPDIR:-/tmp}/runnel-global-spill}"
mkdir -p "$WORK"
./runnel --version >/dev/null
java -cp "connectors/target/runnel.jar:connectors/target/lib/*" dev.runnel.demo.DemoDataMain \
  --out "$WORK/days.jsonl" --days "$DAYS" >/dev/null
python3 - "$WORK/days.jsonl" "$WORK/rec.jsonl" <<'EOF'
import re, sys
src, dst = sys.argv[1], sys.argv[2]
nxt = [0, 0, 0, 0]
with open(src, 'rb') as f, open(dst, 'wb') as o:
    o.write(b'{"runnel_recording":1,"topic":"bench.global","partitions":4}\n')
    for i, line in enumerate(f):
        v = line.rstrip(b'\n')
        if not v:
            continue
        m = re.search(rb'"hub":"QM-(\d\d)"', v)
        p = (int(m.group(1)) - 1) % 4 if m else 0
        o.write(b'{"partition":%d,"offset":%d,"timestamp":%d,"key":null,"value":%s}\n' % (p, nxt[p], 1774393200000 + 1000 * i, v))
        nxt[p] += 1
print("records per partition", nxt)
EOF
yaml=demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml
for scope in partition global; do
  sed -e 's/corrections: replace/corrections: learn_as_new/' \
      -e "s/^  noise_half_life_records: 500\$/  noise_half_life_records: 500\n  scope: $scope/" "$yaml" > "$WORK/$scope.yaml"
  grep -q "scope: $scope" "$WORK/$scope.yaml"
done
echo "source: $(stat -c %s "$WORK/rec.jsonl") bytes, $(($(wc -l < "$WORK/rec.jsonl") - 1)) records; CPU: $(lscpu | sed -n 's/^Model name: *//p'), $(nproc) processors"
for i in $(seq "$RUNS"); do
  for scope in partition global; do
    load=$(cut -d' ' -f1-3 /proc/loadavg)
    /usr/bin/time -f '%e %U %S' -o "$WORK/$scope.time" \
      java -jar connectors/target/runnel.jar backtest --config "$WORK/$scope.yaml" --source "$WORK/rec.jsonl" \
      --out "$WORK/out-$scope" > "$WORK/$scope.out" 2> "$WORK/$scope.err"
    read -r wall user sys < "$WORK/$scope.time"
    copy=$(tr '\r' '\n' < "$WORK/$scope.err" | grep "records copied" | grep "temporary file" || true)
    printf '%s run %d: %6.1f s wall, %6.1f s CPU (user+sys) (load %s)%s\n' "$scope" "$i" "$wall" \
      "$(echo "$user + $sys" | bc)" "$load" "${copy:+; copy: $copy}"
  done
done
