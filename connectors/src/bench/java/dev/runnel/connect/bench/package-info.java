/** Benchmarks that need a broker (end to end through the exactly-once runner); run on demand, never by the build. */
package dev.runnel.connect.bench;
