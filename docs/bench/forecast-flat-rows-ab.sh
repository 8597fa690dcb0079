#!/usr/bin/env bash
# Learned rows side by side in flat arrays (docs/performance.md, "Forecast path", "Where the time of
# the forecast path goes"): paired A/B of the build before against this tree on the invented
# non-repeating year (DemoDataMain), demo configuration with input.forecast (corrections: replace),
# each step made anew when the feed wraps, with the A/A for the spread. The cut was taken back: to
# measure it again, run this from a checkout of commit 40a3e6f (the cut) with BEFORE a compiled
# checkout of cf73c14 (the build before). From the root, after
#   mvn -o -q -Pbench -pl stream-core package -DskipTests && mvn -o -q -pl demo-data compile
# and with BEFORE=<root of the build before, compiled>. Lines are appended to OUT.
set -euo pipefail
OUT=${OUT:-docs/bench/forecast-flat-rows-ab.txt}
: "${BEFORE:?set BEFORE to the root of the build before}"
TMP=$(mktemp -d)
java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain --out "$TMP/year.jsonl"
JAR=stream-core/target/benchmarks.jar
echo "# $(date -u +%FT%TZ) $(lscpu | grep 'Model name' | sed 's/  */ /g'), $(nproc) CPUs; load: $(cut -d' ' -f1-3 /proc/loadavg)" | tee -a "$OUT"
J="java -cp $JAR dev.runnel.core.bench.PipelineBuildsAB --slices 16 --append $OUT --records $TMP/year.jsonl --fresh-each-lap"
F="--variant-a demo_forecast --variant-b demo_forecast"
$J --a stream-core/target/classes --b stream-core/target/classes $F --label "A/A, after, demo + input.forecast"
$J --a "$BEFORE/stream-core/target/classes" --b stream-core/target/classes $F --label "flat rows: before -> after, demo + input.forecast"
$J --a stream-core/target/classes --b "$BEFORE/stream-core/target/classes" $F --label "flat rows: after -> before, demo + input.forecast"
echo "# done $(date -u +%FT%TZ); load: $(cut -d' ' -f1-3 /proc/loadavg)" | tee -a "$OUT"
rm -rf "$TMP"
