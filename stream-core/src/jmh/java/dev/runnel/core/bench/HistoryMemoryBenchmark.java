package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.Locale;

/**
 * Heap held by the history features (docs/performance.md, "History features"): {@code --entities}
 * entities (default 10^6) through one history feature at a time, each with {@code max_entities}
 * equal to that number; every entity gets {@code --rounds} hourly actuals (default 3), then half as
 * many new entities again arrive (so the cap drops the least recently updated). Heap in use is read
 * after a full GC, less the heap in use before the featurizer was made. Run it with a bounded
 * heap, so exceeding it fails the run:
 *
 * <pre>{@code
 * java -Xmx2g -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.HistoryMemoryBenchmark --out docs/bench/memory-history-results.md
 * }</pre>
 */
public final class HistoryMemoryBenchmark {
  private HistoryMemoryBenchmark() { }

  static final String YAML = """
      name: memory-history
      input:
        fields:
          hub: text
          sessions: number
          issued_at: time
          hour_start: time
        event_time: {field: issued_at, format: iso8601}
        forecast: {entity_fields: [hub], target_time_field: hour_start}
      target: sessions
      features:
        - FEATURE
      model:
        prior_variance: 100
      outputs:
        snapshot_every_records: 0
      """;

  static final String[][] CASES = {
      {"lag P1D (grid PT1H, 26 cells)", "{kind: lag, offset: P1D, max_entities: N}"},
      {"lag P7D (grid PT1H, 170 cells), a fifth of the entities", "{kind: lag, offset: P7D, max_entities: N, expire_after: P30D}"},
      {"smoothed (one mean)", "{kind: smoothed, half_life: P7D, max_entities: N}"},
      {"smoothed hour_of_day (24 means)", "{kind: smoothed, half_life: P7D, season: hour_of_day, max_entities: N}"},
  };

  public static void main(String[] args) throws IOException {
    int entities = 1_000_000;
    int rounds = 3;
    Path out = Path.of("docs/bench/memory-history-results.md");
    for (int a = 0; a < args.length; a++) {
      switch (args[a]) {
        case "--entities" -> entities = Integer.parseInt(args[++a]);
        case "--rounds" -> rounds = Integer.parseInt(args[++a]);
        case "--out" -> out = Path.of(args[++a]);
        default -> throw new IllegalArgumentException("unknown option " + args[a] + "; allowed: --entities N, --rounds N, --out FILE");
      }
    }
    MemoryMXBean mem = ManagementFactory.getMemoryMXBean();
    StringBuilder md = new StringBuilder("<!-- written by dev.runnel.core.bench.HistoryMemoryBenchmark; do not edit by hand -->\n");
    md.append("Run ").append(Instant.now()).append(", max heap (-Xmx) ").append(MemoryBenchmark.mb(Runtime.getRuntime().maxMemory()))
        .append(String.format(Locale.ROOT, ", %,d entities (max_entities the same), %d hourly actuals each, then %,d new entities.%n%n",
            entities, rounds, entities / 2));
    md.append("Heap in use after GC, less the heap in use before the featurizer was made (the bytes of the keys included).\n\n");
    md.append("| feature | entities held (the cap, full) | heap in use after GC | per entity | time per record |\n|---|---|---|---|---|\n");
    int all = entities;
    for (String[] c : CASES) {
      entities = c[0].contains("a fifth") ? all / 5 : all; // 170 cells of 24 bytes: 4 GB for 10^6 entities
      System.gc();
      long base = mem.getHeapMemoryUsage().getUsed();
      PipelineConfig cfg = ConfigLoader.parse(YAML.replace("FEATURE", c[1].replace("N", Integer.toString(entities))), "memory-history.yaml");
      Featurizer f = new Featurizer(cfg);
      RecordSchema s = cfg.input().schema();
      EventRecord r = new EventRecord(s);
      int hub = s.slot("hub");
      int sessions = s.slot("sessions");
      double[] row = new double[f.maxDimension() + 8];
      char[] key = new char[16];
      long t0 = Instant.parse("2026-01-05T00:00:00Z").toEpochMilli();
      long records = 0;
      long start = System.nanoTime();
      for (int round = 0; round <= rounds; round++) {
        long target = t0 + round * 3_600_000L;
        int from = round < rounds ? 0 : entities;
        int to = round < rounds ? entities : entities + entities / 2;
        for (int k = from; k < to; k++) {
          int len = digits(key, k);
          r.setText(hub, key, 0, len);
          r.setNumber(sessions, k % 37);
          f.learnAndEncode(r, target, target + 300_000L, target + 300_000L, row);
          records++;
        }
      }
      double nsPerRecord = (System.nanoTime() - start) / (double) records;
      System.gc();
      long used = mem.getHeapMemoryUsage().getUsed() - base;
      md.append(String.format(Locale.ROOT, "| %s | %,d | %s | %,d bytes | %.0f ns |%n", c[0], entities,
          MemoryBenchmark.mb(used), used / entities, nsPerRecord));
      if (f.dimension() < 0) System.out.println(); // keep f reachable until measured
    }
    Files.createDirectories(out.toAbsolutePath().getParent());
    Files.writeString(out, md.toString(), StandardCharsets.UTF_8);
    System.out.println(md);
  }

  /** "e" and the decimal digits of k into c; returns the length. */
  private static int digits(char[] c, int k) {
    c[0] = 'e';
    String d = Integer.toString(k);
    d.getChars(0, d.length(), c, 1);
    return d.length() + 1;
  }
}
