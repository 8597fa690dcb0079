#!/bin/sh
# Paired A/B of the one-file-per-feature-kind split (docs/performance.md, "One file per feature kind").
# Usage, from the repository root: docs/bench/feature-split-ab.sh <classes of the build before>
# e.g. git worktree add /tmp/base 2a32cd2 && (cd /tmp/base && mvn -o -q -pl stream-core compile)
#      docs/bench/feature-split-ab.sh /tmp/base/stream-core/target/classes
# Appends one line per run to docs/bench/feature-split-ab.txt.
set -e
A="$1"
B=stream-core/target/classes
OUT=docs/bench/feature-split-ab.txt
EVERY=docs/bench/feature-split-every-kind.yaml
mvn -o -q -Pbench -pl stream-core package -DskipTests
AB="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB --slices 24 --append $OUT"
$AB --a "$A" --b "$A" --label "demo A/A (before/before)"
$AB --a "$A" --b "$B" --label "demo before/after"
$AB --a "$B" --b "$A" --label "demo after/before (reversed)"
$AB --a "$A" --b "$A" --config "$EVERY" --label "every kind A/A (before/before)"
$AB --a "$A" --b "$B" --config "$EVERY" --label "every kind before/after"
$AB --a "$B" --b "$A" --config "$EVERY" --label "every kind after/before (reversed)"
# the featurizer alone (check + learnAndEncode/encode of pre-decoded records, no model)
FAB="java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.FeaturizerBuildsAB --slices 24 --append $OUT"
$FAB --a "$A" --b "$A" --label "demo A/A (before/before)"
$FAB --a "$A" --b "$B" --label "demo before/after"
$FAB --a "$B" --b "$A" --label "demo after/before (reversed)"
$FAB --a "$A" --b "$A" --config "$EVERY" --label "every kind A/A (before/before)"
$FAB --a "$A" --b "$B" --config "$EVERY" --label "every kind before/after"
$FAB --a "$B" --b "$A" --config "$EVERY" --label "every kind after/before (reversed)"
