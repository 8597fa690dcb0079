package dev.runnel.connect.launch;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.text.TerminalText;
import dev.runnel.connect.web.LiveState;
import dev.runnel.connect.web.ServiceMetrics;
import dev.runnel.connect.web.WebAccess;
import dev.runnel.connect.web.WebTls;
import dev.runnel.connect.web.WebView;
import dev.runnel.core.config.PipelineConfig;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.file.Path;
import java.util.Locale;
import java.util.Map;

/**
 * A live pipeline started for a person at a terminal, wired once for {@code run} and
 * {@code demo}: the cluster (the one named, else the embedded broker), the exactly-once runner on
 * its own thread, the live web view, the progress line, and a summary on stop. Two steps, so a
 * caller can prepare the cluster (create a topic) before the runner starts:
 * {@link #connect}, then {@link #startRunner}. One thread drives it; {@link #close} stops all.
 */
public final class LivePipeline implements AutoCloseable {

  /**
   * How to start.
   *
   * @param bootstrapServers the cluster; null or blank: {@code kafka.bootstrap_servers}, and when
   *     that is empty too, the embedded broker
   * @param brokerDataDir the embedded broker's data folder; null: {@code kafka.embedded.data_dir}
   * @param brokerPort the embedded broker's client port; -1: {@code kafka.embedded.port}; 0: any free port
   * @param instanceId this instance's stable id
   * @param webPort the live view's port; null: {@code web.port}; 0: any free port
   * @param web serve the live view (also needs {@code web.enabled})
   * @param webPortFallback a taken port falls back to a free one (the demo), instead of an error
   * @param prefix what the lines printed begin with, e.g. "runnel" or "demo"
   */
  public record Options(String bootstrapServers, Path brokerDataDir, int brokerPort, String instanceId,
                        Integer webPort, boolean web, boolean webPortFallback, String prefix) { }

  private final PipelineConfig config;
  private final Options options;
  private final PrintStream err;
  private final EmbeddedBroker broker;
  private final String servers;
  private final OutputTally tally = new OutputTally();
  private final WebAccess access;
  private ExactlyOnceRunner runner;
  private LiveService service;
  private ServiceMetrics metrics;
  private Thread work;
  private LiveState live;
  private WebView web;
  private long startNanos;

  private LivePipeline(PipelineConfig config, Options options, PrintStream err, EmbeddedBroker broker, String servers,
                       WebAccess access) {
    this.access = access;
    this.config = config;
    this.options = options;
    this.err = err;
    this.broker = broker;
    this.servers = servers;
  }

  /**
   * Step one: finds the cluster, starting the embedded broker when none is named.
   *
   * @param err where the lines for the person go (usually System.err)
   */
  public static LivePipeline connect(PipelineConfig config, Options options, PrintStream err) throws IOException {
    return connect(config, options, err, System.getenv(WebAccess.TOKEN_ENV));
  }

  /**
   * As {@link #connect(PipelineConfig, Options, PrintStream)} with the value of {@value WebAccess#TOKEN_ENV} given
   * (null: unset), for tests.
   *
   * @throws IllegalArgumentException for a web.bind that does not resolve, or that is not a loopback address
   *     while no token is set; for an unreadable web.token_file; for a web.forecast_key_field that is no text field
   */
  public static LivePipeline connect(PipelineConfig config, Options options, PrintStream err, String tokenEnv) throws IOException {
    WebAccess access = WebAccess.open();
    if (options.web() && config.web().enabled()) {
      // said before anything starts: a web.bind that does not resolve, or is open to others without a token
      access = WebAccess.resolve(config.web().tokenFile(), tokenEnv)
          .withTls(WebTls.context(config.web().keyStoreFile(), config.web().keyStorePasswordFile(), System.getenv(WebTls.PASSWORD_ENV)));
      access.checkBind(config.web().bind(), WebView.bindAddress(config.web().bind(), 0));
      LiveService.keyField(config);
    }
    String servers = options.bootstrapServers();
    if (servers == null || servers.isBlank()) {
      servers = config.kafka().bootstrapServers();
    }
    EmbeddedBroker broker = null;
    if (servers == null || servers.isBlank()) {
      Path dir = options.brokerDataDir() != null ? options.brokerDataDir() : Path.of(config.kafka().embedded().dataDir());
      int port = options.brokerPort() >= 0 ? options.brokerPort() : config.kafka().embedded().port();
      broker = new EmbeddedBroker(dir, port, 0, Map.of(), EmbeddedBroker.DEFAULT_START_TIMEOUT, "768m");
      err.printf("%s: no kafka.bootstrap_servers configured; starting the embedded broker (data in %s)...%n",
          options.prefix(), TerminalText.safe(broker.folder().toString()));
      broker.start();
      err.printf("%s: embedded broker ready at %s (log: %s)%n", options.prefix(), broker.bootstrapServers(),
          TerminalText.safe(broker.logFile().toString()));
      servers = broker.bootstrapServers();
    }
    return new LivePipeline(config, options, err, broker, servers, access);
  }

  /** The cluster's bootstrap servers. */
  public String bootstrapServers() {
    return servers;
  }

  /** The embedded broker started, or null when a cluster was named. */
  public EmbeddedBroker broker() {
    return broker;
  }

  /** The runner's settings for this configuration. */
  public static RunnerSettings runnerSettings(PipelineConfig cfg, String bootstrap, String instanceId) {
    String topic = cfg.input().topic().orElseThrow(() -> new IllegalArgumentException(
        "input.topic: missing; name the Kafka topic to consume, e.g. input: {topic: " + cfg.name() + ".events}"));
    long records = Math.min(Integer.MAX_VALUE, Math.max(1, cfg.kafka().commitIntervalRecords()));
    return RunnerSettings.of(cfg.name(), topic, bootstrap)
        .withClientProperties(cfg.kafka().clientProperties())
        .withCommitInterval(Math.max(1, cfg.kafka().commitIntervalMs()), (int) records)
        .withInstanceId(instanceId);
  }

  /** Step two: starts the runner on its own thread, then the live view. */
  public LivePipeline startRunner() throws IOException {
    RunnerSettings settings = runnerSettings(config, servers, options.instanceId());
    service = new LiveService(config, tally);
    runner = new ExactlyOnceRunner(settings, tally.wrap(service.factory()));
    service.attach(runner);
    if (options.web() && config.web().enabled()) {
      metrics = new ServiceMetrics(config.name(), service); // before the runner starts: it listens to commits and restores
    }
    startNanos = System.nanoTime();
    work = new Thread(runner, options.prefix() + "-runner");
    work.start();
    err.printf("%s: pipeline %s consuming %s from %s (group %s)%n", options.prefix(), TerminalText.safe(config.name()),
        TerminalText.safe(settings.inputTopic()), servers, TerminalText.safe(settings.groupId()));
    if (options.web() && config.web().enabled()) {
      live = new LiveState(config.name(), servers, config.kafka().clientProperties(), runner::counters,
          LiveState.seriesFields(config)).start();
      web = WebView.start(config.web().bind(), options.webPort() != null ? options.webPort() : config.web().port(),
          options.webPortFallback(), config.web().allowedHosts(), live, access, service, metrics);
      err.println(options.prefix() + ": live view at " + web.url());
    }
    return this;
  }

  /**
   * Stops cleanly when the JVM is asked to end (Ctrl-C, SIGTERM): the open transaction is
   * committed, then the embedded broker stops.
   */
  public void stopOnShutdown() {
    if (broker != null) {
      broker.detachShutdownHook(); // the hook below commits first, then stops the broker
    }
    Runtime.getRuntime().addShutdownHook(new Thread(() -> {
      if (runner != null) {
        runner.close();
      }
      if (broker != null) {
        broker.stop();
      }
    }, "runnel-stop"));
  }

  /** The runner (after {@link #startRunner}). */
  public ExactlyOnceRunner runner() {
    return runner;
  }

  /** Whether the runner's thread still runs. */
  public boolean running() {
    return work != null && work.isAlive();
  }

  /** The live view's address, or null without one. */
  public String webUrl() {
    return web == null ? null : web.url();
  }

  /** What the web server serves of this pipeline (after {@link #startRunner}). */
  public LiveService service() {
    return service;
  }

  /** The outputs counted so far. */
  public OutputTally tally() {
    return tally;
  }

  /** Waits while the runner runs, drawing the progress line. */
  public void awaitWithProgress(Progress progress) throws InterruptedException {
    while (work.isAlive()) {
      work.join(500);
      RunnerCounters c = runner.counters();
      progress.update(c.recordsIn(), () -> progressExtra(c));
    }
  }

  /** What the progress line says beside the records: the lag with its unit, rejects, commits. */
  public static String progressExtra(RunnerCounters c) {
    return String.format(Locale.ROOT, "%s  %,d rejects  %,d commits",
        c.lag() < 0 ? "lag unknown" : String.format(Locale.ROOT, "%,d records behind", c.lag()), c.rejects(), c.commits());
  }

  /** Stops the runner (committing the open transaction); the live view and the broker stay. */
  public void stopRunner() throws InterruptedException {
    if (runner != null) {
      runner.close();
      work.join(60_000);
    }
  }

  private void stopView() {
    if (web != null) {
      web.close();
      web = null;
    }
    if (live != null) {
      live.close();
      live = null;
    }
  }

  /** The summary printed on stop: what went in and out, and how fast, in plain words. */
  public String summary() {
    RunnerCounters c = runner.counters();
    double secs = (System.nanoTime() - startNanos) / 1e9;
    return summary(config.name(), c, tally, secs);
  }

  /** The summary text; package-private for tests. */
  static String summary(String name, RunnerCounters c, OutputTally tally, double seconds) {
    StringBuilder sb = new StringBuilder(512);
    long s = Math.max(0, Math.round(seconds));
    sb.append(String.format(Locale.ROOT, "pipeline %s ran %d:%02d:%02d%n", name, s / 3600, s / 60 % 60, s % 60));
    sb.append(String.format(Locale.ROOT, "  records in     %,d (%,.0f a second on average)%n", c.recordsIn(),
        c.recordsIn() / Math.max(1e-9, seconds)));
    sb.append(String.format(Locale.ROOT, "  predictions    %,d%n", tally.predictions()));
    sb.append(String.format(Locale.ROOT, "  snapshots      %,d%n", tally.snapshots()));
    Map<String, Long> byReason = tally.rejectsByReason();
    StringBuilder reasons = new StringBuilder();
    for (Map.Entry<String, Long> e : byReason.entrySet()) {
      reasons.append(reasons.length() == 0 ? ": " : ", ").append(e.getKey()).append(' ')
          .append(String.format(Locale.ROOT, "%,d", e.getValue()));
    }
    sb.append(String.format(Locale.ROOT, "  rejects        %,d%s%n", c.rejects(), reasons));
    sb.append(String.format(Locale.ROOT, "  transactions   %,d committed, %,d aborted (their records were processed again)%n",
        c.commits(), c.aborts()));
    if (c.lag() >= 0) {
      sb.append(String.format(Locale.ROOT, "  behind         %,d records at the last commit%n", c.lag()));
    }
    return TerminalText.lines(sb);
  }

  /** Stops the runner, the live view and the embedded broker, in that order. */
  @Override
  public void close() throws InterruptedException {
    try {
      stopRunner();
      stopView();
    } finally {
      if (broker != null) {
        broker.stop();
      }
    }
  }
}
