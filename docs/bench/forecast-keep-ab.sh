#!/usr/bin/env bash
# Kept settled forecasts (docs/performance.md, "Forecast path", last subsection): paired A/B on the
# invented non-repeating year (DemoDataMain), demo configuration with input.forecast
# (corrections: replace), each step made anew when the feed wraps, with the A/A for the spread.
# The cut (settled forecasts kept in PendingForecasts' pool, moved by id) was taken back: it is
# commit 9cecb53 (measured) and 27a9c97 (with the expiry fix the new test found); the build before is
# 0bcedba. The ceiling variant is 0bcedba with settle's keeping loop switched off (not committed).
# BEFORE: a compiled checkout of the build before; CUT: a compiled tree of the variant measured
# (the ceiling variant skips keeping the settled forecasts altogether, which breaks corrections:
# it bounds what any cut of the keeping can gain). From the root, after
#   mvn -o -q -Pbench -pl stream-core package -DskipTests && mvn -o -q -pl demo-data compile
# Lines are appended to OUT.
set -euo pipefail
OUT=${OUT:-docs/bench/forecast-keep-ab.txt}
: "${BEFORE:?set BEFORE to the root of the build before}"
: "${CUT:?set CUT to the root of the variant}"
NAME=${NAME:-cut}
TMP=$(mktemp -d)
java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain --out "$TMP/year.jsonl"
JAR=${JAR:-stream-core/target/benchmarks.jar}
echo "# $(date -u +%FT%TZ) $(lscpu | grep 'Model name' | sed 's/  */ /g'), $(nproc) CPUs; load: $(cut -d' ' -f1-3 /proc/loadavg)" | tee -a "$OUT"
J="java -cp $JAR dev.runnel.core.bench.PipelineBuildsAB --slices 16 --append $OUT --records $TMP/year.jsonl --fresh-each-lap"
F="--variant-a demo_forecast --variant-b demo_forecast"
B="$BEFORE/stream-core/target/classes"
C="$CUT/stream-core/target/classes"
$J --a "$B" --b "$B" $F --label "A/A, before, demo + input.forecast"
$J --a "$B" --b "$C" $F --label "$NAME: before -> $NAME, demo + input.forecast"
$J --a "$C" --b "$B" $F --label "$NAME: $NAME -> before, demo + input.forecast"
echo "# done $(date -u +%FT%TZ); load: $(cut -d' ' -f1-3 /proc/loadavg)" | tee -a "$OUT"
rm -rf "$TMP"
