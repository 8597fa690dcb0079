#!/usr/bin/env bash
# Where the time of the forecast path goes (docs/performance.md, "Forecast path", "Where the time of
# the forecast path goes"). Feed: the invented non-repeating year (DemoDataMain), each step made anew
# when the feed wraps. From the root, after
#   mvn -o -q -Pbench -pl stream-core package -DskipTests && mvn -o -q -pl demo-data compile
# 1. A JFR profile of the demo with and without input.forecast side by side in one JVM (each in a
#    thread of its own, in turns of 0.2 s of thread CPU, ForecastPathProfile), split by thread and
#    summed by the frame called from PipelineStep.processDecoded (docs/bench/jfr-stages.py).
# 2. The same with the forecast block's parts taken off one by one (no_memory, reject), and with a
#    sink that encodes every output as OutputJson does (--encode).
# BEFORE=<root of another build> adds its paired A/B against this tree (PipelineBuildsAB, 16 slices)
# and the A/A; OUT= names the file the A/B lines are appended to.
set -euo pipefail
OUT=${OUT:-docs/bench/forecast-path-profile-ab.txt}
TMP=$(mktemp -d)
java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain --out "$TMP/year.jsonl"
JAR=stream-core/target/benchmarks.jar
P="dev.runnel.core.bench.ForecastPathProfile --records $TMP/year.jsonl"
printf '<?xml version="1.0" encoding="UTF-8"?>\n<configuration version="2.0"><event name="jdk.ExecutionSample"><setting name="enabled">true</setting><setting name="period">2 ms</setting></event></configuration>\n' > "$TMP/samples.jfc"
echo "# $(date -u +%FT%TZ) $(lscpu | grep 'Model name' | sed 's/  */ /g'), $(nproc) CPUs; load: $(cut -d' ' -f1-3 /proc/loadavg)"
java -XX:+UnlockDiagnosticVMOptions -XX:+DebugNonSafepoints -XX:StartFlightRecording=filename=$TMP/pair.jfr,settings=$TMP/samples.jfc \
  -cp $JAR $P --seconds 30 | tee "$TMP/rates.txt"
jfr print --events jdk.ExecutionSample --stack-depth 80 "$TMP/pair.jfr" > "$TMP/pair.txt"
for v in demo_no_forecast demo_forecast; do
  ns=$(grep "^$v:" "$TMP/rates.txt" | sed 's/.*(\([0-9]*\) ns per record).*/\1/')
  echo "## $v ($ns ns per record)"
  python3 docs/bench/jfr-stages.py "$TMP/pair.txt" "$v" "$ns"
done
java -cp $JAR $P --seconds 15 --variants demo_no_forecast,demo_forecast/no_memory,demo_forecast/reject,demo_forecast
java -cp $JAR $P --seconds 15 --encode --variants demo_no_forecast,demo_forecast
if [ -n "${BEFORE:-}" ]; then
  J="java -cp $JAR dev.runnel.core.bench.PipelineBuildsAB --slices 16 --append $OUT --records $TMP/year.jsonl --fresh-each-lap"
  F="--variant-a demo_forecast --variant-b demo_forecast"
  $J --a stream-core/target/classes --b stream-core/target/classes $F --label "A/A, demo + input.forecast"
  $J --a "$BEFORE/stream-core/target/classes" --b stream-core/target/classes $F --label "${LABEL:-change}: before -> after, demo + input.forecast"
  $J --a stream-core/target/classes --b "$BEFORE/stream-core/target/classes" $F --label "${LABEL:-change}: after -> before, demo + input.forecast"
  $J --a stream-core/target/classes --b stream-core/target/classes --variant-a demo_no_forecast --variant-b demo_forecast --label "without -> with input.forecast, this build"
fi
rm -rf "$TMP"
