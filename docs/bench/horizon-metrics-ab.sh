#!/usr/bin/env bash
# Paired A/B of the whole pipeline step before and after the errors by horizon (issue 15), on a feed
# with input.forecast: 12 invented hubs, 14 days; every evening at 18:00 a forecast for each of the
# next day's hours per hub; each hour's actual arrives 5 minutes after the hour ends. About half the
# records settle a forecast. Usage, from the repository root, with the build before in $BEFORE:
#   git archive <commit-before> | tar -x -C /tmp/hz-base && (cd /tmp/hz-base && mvn -o -q -pl stream-core compile)
#   mvn -o -q -Pbench -pl stream-core package -DskipTests
#   BEFORE=/tmp/hz-base docs/bench/horizon-metrics-ab.sh
set -euo pipefail
BEFORE=${BEFORE:?set BEFORE to the root of the build before}
FEED=$(mktemp --suffix=.jsonl)
python3 - "$FEED" <<'EOF'
import random, datetime, math, sys
random.seed(15)
H = datetime.timedelta(hours=1)
t0 = datetime.datetime(2026, 3, 2, 0, 0)
hubs = ["QM-%02d" % i for i in range(1, 13)]
def iso(t): return t.strftime("%Y-%m-%dT%H:%M:%SZ")
ev = []
for d in range(14):
  for hh in range(24):
    hour = t0 + datetime.timedelta(days=d) + hh * H
    for hub in hubs:
      temp = round(8 + 5 * math.sin(hh / 24 * 2 * math.pi) + random.gauss(0, 2), 1)
      s = round(max(0, 20 + 6 * math.sin((hh - 6) / 24 * 2 * math.pi) - 0.3 * temp + random.gauss(0, 2)), 1)
      at = hour + H + datetime.timedelta(minutes=5)
      ev.append((at, '{"hub":"%s","issued_at":"%s","hour_start":"%s","temperature_c":%s,"sessions":%s}' % (hub, iso(at), iso(hour), temp, s)))
    if hh == 18:
      issue = t0 + datetime.timedelta(days=d) + 18 * H
      for k in range(24):
        tgt = t0 + datetime.timedelta(days=d + 1) + k * H
        for hub in hubs:
          ev.append((issue, '{"hub":"%s","issued_at":"%s","hour_start":"%s","temperature_c":%s}' % (hub, iso(issue), iso(tgt), round(8 + random.gauss(0, 3), 1))))
ev.sort(key=lambda e: e[0])
open(sys.argv[1], "w").write("\n".join(l for _, l in ev) + "\n")
EOF
OUT=docs/bench/horizon-metrics-ab.txt
J="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --config docs/bench/horizon-metrics-feed.yaml --records $FEED --slices 16 --append $OUT"
$J --a stream-core/target/classes --b stream-core/target/classes --label "A/A forecast feed"
$J --a "$BEFORE/stream-core/target/classes" --b stream-core/target/classes --label "before/after horizon metrics, forecast feed"
$J --a stream-core/target/classes --b "$BEFORE/stream-core/target/classes" --label "after/before horizon metrics (reversed), forecast feed"
$J --a "$BEFORE/stream-core/target/classes" --b stream-core/target/classes --label "before/after horizon metrics, demo feed without input.forecast" \
  --config demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml --records demo-data/samples/quillmarsh-small.jsonl
rm -f "$FEED"
