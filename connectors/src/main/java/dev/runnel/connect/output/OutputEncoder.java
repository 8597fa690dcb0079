package dev.runnel.connect.output;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;

/**
 * Writes predictions, settled forecasts and rejects in the encoding {@code outputs.encoding} names
 * (docs/formats.md). Snapshots are always JSON ({@link OutputJson#snapshot}). One thread.
 */
public interface OutputEncoder {

  /** One prediction. @return new bytes */
  byte[] prediction(Prediction p, EventRecord record);

  /** One settled forecast. @return new bytes */
  byte[] settled(SettledForecast s, EventRecord record);

  /** One rejected record ({@code raw} not modified). @return new bytes */
  byte[] reject(RejectReason reason, String detail, long partition, long offset, byte[] raw, int off, int len);

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

    @Override public PipelineConfig.OutputEncoding encoding() {
      return PipelineConfig.OutputEncoding.JSON;
    }
  }
}
