#!/usr/bin/env bash
# Paired A/B of the whole pipeline step under model.scope: global, before and after the pending
# share became weighted sums (2026-12-05): one partition, the demo sample, a share every 1,000
# records (made, not folded: the per-record cost is the pending share's update beside the view's).
# Usage, from the repository root, with the stream-core classes (folder or jar) of the build before
# in $BEFORE:
#   mvn -o -q -Pbench -pl stream-core package -DskipTests
#   BEFORE=/tmp/gcost-before/lib/stream-core-0.1.0-SNAPSHOT.jar docs/bench/global-pending-sums-ab.sh
set -euo pipefail
BEFORE=${BEFORE:?set BEFORE to the stream-core classes of the build before}
OUT=docs/bench/global-pending-sums-ab.txt
J="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --slices 12 --append $OUT --config docs/bench/global-pending-sums.yaml"
$J --a stream-core/target/classes --b stream-core/target/classes --label "global, A/A"
$J --a "$BEFORE" --b stream-core/target/classes --label "global, before/after pending sums"
