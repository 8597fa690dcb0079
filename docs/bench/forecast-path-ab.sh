#!/usr/bin/env bash
# Paired A/B of the whole pipeline step (PipelineBuildsAB: two builds or two configurations in one
# JVM, alternating slices of 0.5 s thread CPU time, 16 slices) for the forecast path's speed
# (docs/performance.md, "Forecast path"). The build before the change in $BEFORE; the build after
# is this tree. Feeds: the demo sample cycled (after the first lap every actual is a repeat and
# no forecast ever settles again), and two invented non-repeating feeds from the demo generator
# (a year with forecasts 3 h ahead; 60 days with forecasts 24 h ahead, i.e. 24 forecasts per
# hub-hour), each step made anew when the feed wraps (--fresh-each-lap). Usage, from the root:
#   git archive <commit-before> | tar -x -C /tmp/fc-base && (cd /tmp/fc-base && mvn -o -q -pl stream-core compile)
#   mvn -o -q -Pbench -pl stream-core package -DskipTests && mvn -o -q -pl demo-data compile
#   BEFORE=/tmp/fc-base docs/bench/forecast-path-ab.sh
set -euo pipefail
BEFORE=${BEFORE:?set BEFORE to the root of the build before}
OUT=${OUT:-docs/bench/forecast-path-ab.txt}
TMP=$(mktemp -d)
java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain --out "$TMP/year-h3.jsonl"
java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain --out "$TMP/60d-h24.jsonl" --days 60 --horizon 24
B=stream-core/target/classes
A=$BEFORE/stream-core/target/classes
{ echo "# $(date -u +%FT%TZ) $(lscpu | grep 'Model name' | sed 's/  */ /g'), $(nproc) CPUs; load: $(cut -d' ' -f1-3 /proc/loadavg)"; } >> "$OUT"
J="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --slices 16 --append $OUT"
F="--variant-a demo_forecast --variant-b demo_forecast"
$J --a $B --b $B $F --label "A/A after, demo + input.forecast, sample cycled"
$J --a $A --b $B $F --label "before/after, demo + input.forecast, sample cycled"
$J --a $B --b $A $F --label "after/before (reversed), demo + input.forecast, sample cycled"
$J --a $A --b $B --label "before/after, demo without input.forecast, sample cycled"
$J --a $A --b $A --variant-b demo_forecast --label "demo -> demo + input.forecast, build before, sample cycled"
$J --a $B --b $B --variant-b demo_forecast --label "demo -> demo + input.forecast, build after, sample cycled"
echo "# $(date -u +%FT%TZ) load: $(cut -d' ' -f1-3 /proc/loadavg)" >> "$OUT"
Y="--records $TMP/year-h3.jsonl --fresh-each-lap"
$J --a $B --b $B $F $Y --label "A/A after, demo + input.forecast, year h3 non-repeating"
$J --a $A --b $B $F $Y --label "before/after, demo + input.forecast, year h3 non-repeating"
$J --a $A --b $B $F --records "$TMP/60d-h24.jsonl" --fresh-each-lap --label "before/after, demo + input.forecast, 60 days h24 non-repeating"
$J --a $A --b $A --variant-b demo_forecast $Y --label "demo -> demo + input.forecast, build before, year h3 non-repeating"
$J --a $B --b $B --variant-b demo_forecast $Y --label "demo -> demo + input.forecast, build after, year h3 non-repeating"
echo "# $(date -u +%FT%TZ) load: $(cut -d' ' -f1-3 /proc/loadavg)" >> "$OUT"
rm -rf "$TMP"
