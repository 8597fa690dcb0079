#!/bin/sh
# Results in docs/bench/feature-split-jmh.txt are of the first (one-loop) version of the split, 13:32-13:35 UTC.
# JMH before/after of the one-file-per-feature-kind split (docs/performance.md): DecodeBenchmark
# (decode + featurize, ns per line) and PipelineStepBenchmark (demo, records/s), each build's own
# benchmarks.jar in its own JVM, alternated four times, the first build flipped every round
# (before, after; after, before; ...), as the load of the shared machine drifts.
# Usage, from the repository root: docs/bench/feature-split-jmh.sh <benchmarks.jar of the build before>
# e.g. git worktree add /tmp/base 2a32cd2 && (cd /tmp/base && mvn -o -q -Pbench -pl stream-core package -DskipTests)
#      docs/bench/feature-split-jmh.sh /tmp/base/stream-core/target/benchmarks.jar
# Appends the result lines of each run to docs/bench/feature-split-jmh.txt.
set -e
BEFORE="$1"
AFTER=stream-core/target/benchmarks.jar
OUT=docs/bench/feature-split-jmh.txt
for round in 1 2 3 4; do
  if [ $((round % 2)) = 1 ]; then ORDER="before after"; else ORDER="after before"; fi
  for build in $ORDER; do
    if [ $build = before ]; then JAR="$BEFORE"; else JAR="$AFTER"; fi
    echo "## round $round, $build ($(date -u +%FT%TZ), load $(cut -d' ' -f1-3 /proc/loadavg))" >> $OUT
    java -jar "$JAR" 'DecodeBenchmark.decodeAndFeaturize|PipelineStepBenchmark' -p config=demo -f 1 -wi 4 -i 5 -w 1 -r 1 \
      | grep -E '^(Benchmark|DecodeBenchmark|PipelineStepBenchmark)' >> $OUT
  done
done
