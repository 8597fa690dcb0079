#!/usr/bin/env bash
# Cost per record of each feature kind / target option of issue 16 beside the demo configuration:
# PipelineBuildsAB with the same build as A and B, B running the demo configuration with one kind
# added (--variant-b), paired slices in one JVM; an A/A run first shows the spread.
# Run from the repository root after: mvn -o -q -Pbench -pl stream-core package -DskipTests
set -euo pipefail
out=docs/bench/new-kinds-ab.txt
: > "$out"
c=stream-core/target/classes
java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --a $c --b $c --label "A/A demo" --append "$out"
for v in demo_hinge demo_spline demo_holidays demo_log1p; do
  java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --a $c --b $c --variant-b $v --label "demo vs $v" --append "$out"
done
