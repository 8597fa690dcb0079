/**
 * JMH benchmarks of stream-core (profile {@code bench}; never part of the default build). Build and
 * run everything with one command each, as listed in {@code docs/performance.md}:
 * <pre>{@code
 * mvn -o -q -Pbench -pl stream-core -am package -DskipTests
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.CoreBenchmarks --out docs/bench
 * }</pre>
 */
package dev.runnel.core.bench;
