#!/usr/bin/env bash
# Paired A/B of the whole step (PipelineBuildsAB, one JVM, alternating 0.5 s thread-CPU slices, 16
# slices) for the forecast path's cuts (docs/performance.md, "Forecast path", "The cuts"): the build
# before a change in $BEFORE, the build after is this tree; and the demo without against with
# input.forecast on one build (the demo configuration carries input.forecast; BenchData's
# demo_no_forecast strips it). Feed: the invented non-repeating year (DemoDataMain, forecasts 3 h
# ahead, 3 records in 4 forecast requests), each step made anew when the feed wraps. Usage, from the root:
#   git archive <commit-before> | tar -x -C /tmp/base && (cd /tmp/base && mvn -o -q -pl stream-core compile)
#   mvn -o -q -Pbench -pl stream-core package -DskipTests && mvn -o -q -pl demo-data compile
#   BEFORE=/tmp/base LABEL="drift input" docs/bench/forecast-path-cuts-ab.sh
# AFTER= and HARNESS= take copies of the classes and benchmarks.jar (to go on building meanwhile);
# QUICK=1 runs only the before/after with input.forecast and the without/with on the build after.
set -euo pipefail
BEFORE=${BEFORE:?set BEFORE to the root of the build before}
LABEL=${LABEL:-change}
OUT=${OUT:-docs/bench/forecast-path-cuts-ab.txt}
TMP=$(mktemp -d)
java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain --out "$TMP/year-h3.jsonl"
B=${AFTER:-stream-core/target/classes}
A=$BEFORE/stream-core/target/classes
echo "# $(date -u +%FT%TZ) $LABEL; $(lscpu | grep 'Model name' | sed 's/  */ /g'), $(nproc) CPUs; load: $(cut -d' ' -f1-3 /proc/loadavg)" >> "$OUT"
J="java -cp ${HARNESS:-stream-core/target/benchmarks.jar} dev.runnel.core.bench.PipelineBuildsAB --slices 16 --append $OUT"
Y="--records $TMP/year-h3.jsonl --fresh-each-lap"
F="--variant-a demo_forecast --variant-b demo_forecast"
$J --a $A --b $B $F $Y --label "$LABEL: before/after, demo + input.forecast, year h3"
[ -n "${QUICK:-}" ] || $J --a $A --b $B --variant-a demo_no_forecast --variant-b demo_no_forecast $Y --label "$LABEL: before/after, demo without input.forecast, year h3"
[ -n "${QUICK:-}" ] || $J --a $B --b $B $F $Y --label "$LABEL: A/A after, demo + input.forecast, year h3"
[ -n "${QUICK:-}" ] || $J --a $A --b $A --variant-a demo_no_forecast --variant-b demo_forecast $Y --label "$LABEL: demo -> demo + input.forecast, build before, year h3"
$J --a $B --b $B --variant-a demo_no_forecast --variant-b demo_forecast $Y --label "$LABEL: demo -> demo + input.forecast, build after, year h3"
echo "# $(date -u +%FT%TZ) load: $(cut -d' ' -f1-3 /proc/loadavg)" >> "$OUT"
rm -rf "$TMP"
