package dev.runnel.connect.web;

import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.kafka.RunnerListener;
import io.prometheus.metrics.core.metrics.CounterWithCallback;
import io.prometheus.metrics.core.metrics.GaugeWithCallback;
import io.prometheus.metrics.core.metrics.Histogram;
import io.prometheus.metrics.expositionformats.PrometheusTextFormatWriter;
import io.prometheus.metrics.model.registry.PrometheusRegistry;
import io.prometheus.metrics.model.snapshots.Labels;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.Map;
import java.util.function.Function;
import org.apache.kafka.common.TopicPartition;

/**
 * The metrics of {@code /metrics}, kept in a registry of the Prometheus Java client
 * ({@code io.prometheus:prometheus-metrics-core}) and written by its text-format writer, so names, escaping and
 * layout follow the Prometheus text exposition format. Every name starts with {@value #PREFIX}, says its unit
 * ({@code _seconds}, {@code _records}), and a counter ends in {@code _total}; every series carries the label
 * {@code pipeline}. The table is in docs/operations.md ("Metrics").
 *
 * <p>Counts are read from the runner when scraped (callbacks), so a scrape shows the runner's own counters;
 * the two durations are histograms fed by the runner's thread through a {@link RunnerListener}.
 */
public final class ServiceMetrics {

  /** What every metric's name starts with. */
  public static final String PREFIX = "runnel_";
  /** Upper bounds of the duration histograms, in seconds. */
  static final double[] DURATION_BOUNDS = {0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1, 0.25, 0.5, 1, 2.5, 5, 10, 30, 60};

  private final PrometheusRegistry registry = new PrometheusRegistry();
  private final PrometheusTextFormatWriter writer = PrometheusTextFormatWriter.create();
  private final Histogram commitSeconds;
  private final Histogram restoreSeconds;

  /**
   * Registers the metrics and makes itself the runner's listener; call before the runner starts.
   *
   * @param pipeline the pipeline name (label {@code pipeline})
   */
  public ServiceMetrics(String pipeline, Service service) {
    ExactlyOnceRunner runner = service.runner();
    Labels base = Labels.of("pipeline", pipeline);
    counter("records_in_total", "Input records processed (records of aborted transactions count again when replayed)", base,
        runner, RunnerCounters::recordsIn);
    counter("outputs_total", "Output records sent: predictions, snapshots, rejects, settled forecasts (not checkpoints)", base,
        runner, RunnerCounters::outputsOut);
    counter("commits_total", "Transactions committed", base, runner, RunnerCounters::commits);
    counter("aborts_total", "Transactions aborted (their records are processed again)", base, runner, RunnerCounters::aborts);
    counter("processing_failures_total", "Records whose processing threw, set aside as processing_failed rejects", base,
        runner, RunnerCounters::processingFailures);
    CounterWithCallback.builder().name(PREFIX + "rejects_total").help("Reject records sent, by reason id")
        .constLabels(base).labelNames("reason")
        .callback(cb -> service.rejectsByReason().forEach((reason, n) -> cb.call(n, reason)))
        .register(registry);
    GaugeWithCallback.builder().name(PREFIX + "consumer_lag_records")
        .help("Records behind the end of each held input partition, at the last commit")
        .constLabels(base).labelNames("partition")
        .callback(cb -> {
          for (Map.Entry<TopicPartition, Long> e : runner.lagByPartition().entrySet()) {
            cb.call(e.getValue(), Integer.toString(e.getKey().partition()));
          }
        })
        .register(registry);
    GaugeWithCallback.builder().name(PREFIX + "partitions_held").help("Input partitions this instance holds and has restored")
        .constLabels(base).callback(cb -> cb.call(runner.heldPartitions().size())).register(registry);
    GaugeWithCallback.builder().name(PREFIX + "ready").help("1 when /ready answers 200, else 0")
        .constLabels(base).callback(cb -> cb.call(runner.notReady() == null ? 1 : 0)).register(registry);
    this.commitSeconds = Histogram.builder().name(PREFIX + "commit_duration_seconds")
        .help("Time to commit a transaction: checkpoints, offsets and the commit itself")
        .constLabels(base).classicOnly().classicUpperBounds(DURATION_BOUNDS).register(registry);
    this.restoreSeconds = Histogram.builder().name(PREFIX + "restore_duration_seconds")
        .help("Time to restore newly assigned partitions from the state topic")
        .constLabels(base).classicOnly().classicUpperBounds(DURATION_BOUNDS).register(registry);
    partitionGauge("noise_sd", "The model's noise standard deviation, in the target's unit", base, service,
        Service.PartitionStats::noiseSd);
    partitionGauge("recent_mae", "Mean absolute a-priori error over recent records, in the target's unit", base, service,
        Service.PartitionStats::recentMae);
    partitionGauge("active_alarms", "Drift alarms raised now", base, service, s -> s.activeAlarms());
    runner.setListener(new RunnerListener() {
      @Override public void committed(long nanos) {
        commitSeconds.observe(nanos / 1e9);
      }

      @Override public void restored(int partitions, long nanos) {
        restoreSeconds.observe(nanos / 1e9);
      }
    });
  }

  private void counter(String name, String help, Labels base, ExactlyOnceRunner runner, Function<RunnerCounters, Long> read) {
    CounterWithCallback.builder().name(PREFIX + name).help(help).constLabels(base)
        .callback(cb -> cb.call(read.apply(runner.counters()))).register(registry);
  }

  private void partitionGauge(String name, String help, Labels base, Service service,
                              Function<Service.PartitionStats, Number> read) {
    GaugeWithCallback.builder().name(PREFIX + name).help(help).constLabels(base).labelNames("partition")
        .callback(cb -> {
          for (Map.Entry<Integer, Service.PartitionStats> e : service.partitionStats().entrySet()) {
            double v = read.apply(e.getValue()).doubleValue();
            if (!Double.isNaN(v)) {
              cb.call(v, Integer.toString(e.getKey()));
            }
          }
        })
        .register(registry);
  }

  /** The content type of {@link #scrape()}. */
  public String contentType() {
    return writer.getContentType();
  }

  /** All metrics now, in the Prometheus text exposition format. */
  public byte[] scrape() {
    ByteArrayOutputStream out = new ByteArrayOutputStream(4096);
    try {
      writer.write(out, registry.scrape());
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return out.toByteArray();
  }
}
