package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import java.util.ArrayList;
import java.util.List;

/**
 * 1,000 records through a featurizer per {@link #run}: {@code check}, then {@code learnAndEncode}
 * for a record with the target, {@code encode} without (as {@link DecodeBenchmark}, without the
 * decoding: the records are decoded once, here, in the constructor). {@link FeaturizerBuildsAB}
 * defines a copy of this class in each build's class loader, so each build runs its own compiled
 * copy of this loop, calling its own featurizer directly.
 */
public final class FeaturizerLoop implements Runnable {

  private final Featurizer featurizer;
  private final EventRecord[] records;
  private final double[] row;
  private int i;
  /** Rows written: trained, scored. */
  public long trained;
  public long scored;
  /** A sum of the rows' first entries, so that no work is dead. */
  public double sum;

  public FeaturizerLoop(String yaml, byte[][] lines) {
    PipelineConfig c = ConfigLoader.parse(yaml, "ab.yaml");
    PipelineConfig.Input in = c.input();
    JsonRecordDecoder decoder = new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format());
    List<EventRecord> ok = new ArrayList<>();
    for (byte[] b : lines) {
      EventRecord r = new EventRecord(in.schema());
      if (decoder.decode(b, 0, b.length, r) == null) {
        ok.add(r);
      }
    }
    records = ok.toArray(new EventRecord[0]);
    featurizer = new Featurizer(c);
    row = new double[featurizer.maxDimension()];
  }

  @Override public void run() {
    double s = 0;
    for (int k = 0; k < 1000; k++) {
      EventRecord r = records[i];
      if (++i == records.length) {
        i = 0;
      }
      if (featurizer.check(r) != null) {
        continue;
      }
      long t = r.eventTimeMillis();
      if (featurizer.hasTarget(r)) {
        featurizer.learnAndEncode(r, t, t, row);
        trained++;
      } else {
        featurizer.encode(r, t, row);
        scored++;
      }
      for (int j = 0; j < 8; j++) {
        s += row[j];
      }
    }
    sum += s;
  }
}
