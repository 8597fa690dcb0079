package dev.runnel.connect.output;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.pipeline.Snapshot;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;

/**
 * Writes predictions, settled forecasts, rejects and coefficient snapshots in the encoding
 * {@code outputs.encoding} names (docs/formats.md). Checkpoints are not outputs and keep their own
 * format. One thread.
 */
public interface OutputEncoder {

  /** One prediction. @return new bytes */
  byte[] prediction(Prediction p, EventRecord record);

  /** One settled forecast. @return new bytes */
  byte[] settled(SettledForecast s, EventRecord record);

  /** One rejected record ({@code raw} not modified). @return new bytes */
  byte[] reject(RejectReason reason, String detail, long partition, long offset, byte[] raw, int off, int len);

  /**
   * One coefficient snapshot.
   *
   * @param json the configuration's JSON writer (the snapshot's layout; Avro lays the same fields into {@code snapshot.avsc})
   * @param partition the source partition the model belongs to (-1 if none)
   * @return new bytes
   */
  byte[] snapshot(OutputJson json, Snapshot s, long partition);

  /** Which encoding this is. */
  PipelineConfig.OutputEncoding encoding();

  /**
   * The encoder a configuration asks for.
   *
   * @param json the configuration's JSON writer (shared for the JSON encoding, so its bytes are the ones before this option)
   */
  static OutputEncoder of(PipelineConfig config, OutputJson json) {
    if (config.outputs().encoding() == PipelineConfig.OutputEncoding.AVRO) {
      return OutputAvro.of(config);
    }
    return new Json(json);
  }

  /** The JSON layouts, written by {@link OutputJson}. */
  final class Json implements OutputEncoder {
    private final OutputJson json;

    public Json(OutputJson json) {
      this.json = json;
    }

    @Override public byte[] prediction(Prediction p, EventRecord record) {
      return json.prediction(p, record);
    }

    @Override public byte[] settled(SettledForecast s, EventRecord record) {
      return json.settled(s, record);
    }

    @Override public byte[] reject(RejectReason reason, String detail, long partition, long offset, byte[] raw, int off, int len) {
      return json.reject(reason, detail, partition, offset, raw, off, len);
    }

    @Override public byte[] snapshot(OutputJson ignored, Snapshot s, long partition) {
      return json.snapshot(s, partition);
    }

    @Override public PipelineConfig.OutputEncoding encoding() {
      return PipelineConfig.OutputEncoding.JSON;
    }
  }
}
