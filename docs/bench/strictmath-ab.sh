#!/bin/sh
# Paired A/B of the StrictMath change (docs/performance.md, "StrictMath in the state path").
# Usage, from the repository root: docs/bench/strictmath-ab.sh <classes of the build before>
# e.g. git worktree add /tmp/base <commit> && (cd /tmp/base && mvn -o -q -pl stream-core compile)
#      docs/bench/strictmath-ab.sh /tmp/base/stream-core/target/classes
# Appends one line per run to docs/bench/strictmath-ab.txt.
set -e
A="$1"
B=stream-core/target/classes
OUT=docs/bench/strictmath-ab.txt
mvn -o -q -Pbench -pl stream-core package -DskipTests
# the demo sample with each hourly time moved to a distinct minute and second, so the cyclic
# encodings' memo rarely hits and sin/cos are computed for most records
MIN=$(mktemp)
awk '{ if (match($0, /"observed_at":"[0-9-]+T[0-9][0-9]:00:00/)) {
         s = substr($0, RSTART, RLENGTH - 5); m = ((NR - 1) * 37) % 60; c = ((NR - 1) * 13) % 60;
         $0 = substr($0, 1, RSTART - 1) s sprintf("%02d:%02d", m, c) substr($0, RSTART + RLENGTH) }
       print }' demo-data/samples/quillmarsh-small.jsonl > "$MIN"
AB="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --append $OUT"
$AB --a "$A" --b "$A" --label "demo A/A"
$AB --a "$A" --b "$B" --label "demo Math/StrictMath"
$AB --a "$A" --b "$A" --config docs/bench/strictmath-worst-case.yaml --records "$MIN" --label "worst case A/A"
$AB --a "$A" --b "$B" --config docs/bench/strictmath-worst-case.yaml --records "$MIN" --label "worst case Math/StrictMath"
$AB --a "$B" --b "$A" --label "demo StrictMath/Math (reversed)"
$AB --a "$B" --b "$A" --config docs/bench/strictmath-worst-case.yaml --records "$MIN" --label "worst case StrictMath/Math (reversed)"
rm -f "$MIN"
