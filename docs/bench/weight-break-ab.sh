#!/usr/bin/env bash
# Paired A/B of the whole pipeline step before and after the weight-break scan (issue 17): the demo
# (a quarter of its records train, 33 columns) and an invented feed where every record trains (ten
# correlated numeric columns and an hour-of-day cycle, 13 columns). Usage, from the repository root,
# with the build before in $BEFORE:
#   git archive <commit-before> | tar -x -C /tmp/attr-before && (cd /tmp/attr-before && mvn -o -q -pl stream-core compile)
#   mvn -o -q -Pbench -pl stream-core package -DskipTests
#   BEFORE=/tmp/attr-before docs/bench/weight-break-ab.sh
set -euo pipefail
BEFORE=${BEFORE:?set BEFORE to the root of the build before}
FEED=$(mktemp --suffix=.jsonl)
python3 - "$FEED" <<'PY'
import random, math, sys, datetime
random.seed(17)
t = datetime.datetime(2026, 1, 1)
out = []
for i in range(50000):
  t += datetime.timedelta(minutes=10)
  f = random.gauss(0, 1)
  xs = [5 * j + 0.8 * f + 0.6 * random.gauss(0, 1) for j in range(10)]
  y = 3 + 1.5 * math.sin(2 * math.pi * t.hour / 24) + sum((j % 3 - 1) * (x - 5 * j) for j, x in enumerate(xs)) + random.gauss(0, 1)
  out.append('{' + ','.join('"x%d":%.6f' % (j + 1, x) for j, x in enumerate(xs)) + ',"y":%.6f,"at":"%s"}' % (y, t.strftime("%Y-%m-%dT%H:%M:%SZ")))
open(sys.argv[1], "w").write("\n".join(out) + "\n")
PY
OUT=docs/bench/weight-break-ab.txt
J="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --slices 16 --append $OUT"
$J --a stream-core/target/classes --b stream-core/target/classes --label "demo A/A"
$J --a "$BEFORE/stream-core/target/classes" --b stream-core/target/classes --label "demo before/after weight-break scan"
$J --a stream-core/target/classes --b "$BEFORE/stream-core/target/classes" --label "demo after/before (reversed)"
K="$J --config docs/bench/weight-break-feed.yaml --records $FEED"
$K --a stream-core/target/classes --b stream-core/target/classes --label "13 columns, all train: A/A"
$K --a "$BEFORE/stream-core/target/classes" --b stream-core/target/classes --label "13 columns, all train: before/after"
$K --a stream-core/target/classes --b "$BEFORE/stream-core/target/classes" --label "13 columns, all train: after/before (reversed)"
