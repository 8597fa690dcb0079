package dev.runnel.connect.cli;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Option;

/** The main job: consume the input topic, run the pipeline per partition, publish exactly once. */
@Command(name = "run", mixinStandardHelpOptions = true,
    description = {"Consume the configured input topic and run the pipeline on every partition, publishing "
        + "<name>.predictions, <name>.coefficients, <name>.rejects and <name>.state exactly once.",
        "Without kafka.bootstrap_servers in the configuration, starts the embedded broker.",
        "Stops cleanly on Ctrl-C / SIGTERM (the open transaction is committed, never half) and exits with 0;"
            + " 2 when the runner stopped on an error."})
public final class RunCommand implements Callable<Integer> {

  @Option(names = "--config", required = true, paramLabel = "FILE", description = "Pipeline configuration (YAML).")
  Path config;

  @Option(names = "--bootstrap-servers", paramLabel = "HOST:PORT",
      description = "Overrides kafka.bootstrap_servers from the configuration.")
  String bootstrap;

  @Option(names = "--instance-id", paramLabel = "ID", defaultValue = "0",
      description = "Stable id of this instance, unique among the instances of one pipeline (default: ${DEFAULT-VALUE}).")
  String instanceId;

  @Option(names = "--data-dir", paramLabel = "DIR",
      description = "Data folder of the embedded broker (overrides kafka.embedded.data_dir).")
  Path dataDir;

  @Option(names = "--quiet", description = "No progress line.")
  boolean quiet;

  @Option(names = "--web-port", paramLabel = "PORT",
      description = "Port of the live web view (overrides web.port; 0 = any free port).")
  Integer webPort;

  @Option(names = "--no-web", description = "Do not serve the live web view (overrides web.enabled).")
  boolean noWeb;

  @Override
  public Integer call() throws Exception {
    PipelineConfig cfg = ConfigLoader.load(config);
    boolean webOn = cfg.web().enabled() && !noWeb;
    if (webOn) {
      dev.runnel.connect.web.WebView.bindAddress(cfg.web().bind(), 0); // a name that does not resolve: say so before anything starts
    }
    EmbeddedBroker broker = null;
    String servers = bootstrap;
    if (servers == null || servers.isBlank()) {
      broker = Launch.brokerIfNeeded(cfg, dataDir, System.err);
      servers = broker != null ? broker.bootstrapServers() : cfg.kafka().bootstrapServers();
    }
    RunnerSettings settings = Launch.runnerSettings(cfg, servers, instanceId);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(settings, PipelineProcessor.factory(cfg));
    if (broker != null) {
      broker.detachShutdownHook(); // our stopper below commits first, then stops the broker
    }
    EmbeddedBroker b = broker;
    Thread stopper = new Thread(() -> {
      runner.close();
      if (b != null) {
        b.stop();
      }
    }, "runnel-stop");
    Runtime.getRuntime().addShutdownHook(stopper);
    boolean handled = stopOnSignals(runner);
    Thread work = new Thread(runner, "runnel-runner");
    work.start();
    System.err.printf("runnel: pipeline %s consuming %s from %s (group %s); Ctrl-C to stop%n",
        cfg.name(), settings.inputTopic(), servers, settings.groupId());
    dev.runnel.connect.web.LiveState live = null;
    dev.runnel.connect.web.WebView web = null;
    if (webOn) {
      live = new dev.runnel.connect.web.LiveState(cfg.name(), servers, cfg.kafka().clientProperties(), runner::counters).start();
      web = dev.runnel.connect.web.WebView.start(cfg.web().bind(), webPort != null ? webPort : cfg.web().port(), false,
          cfg.web().allowedHosts(), live);
      System.err.println("runnel: live view at " + web.url());
    }
    Progress progress = new Progress(System.err, "records", 0, quiet);
    while (work.isAlive()) {
      work.join(500);
      RunnerCounters c = runner.counters();
      progress.update(c.recordsIn(), () -> String.format("%,d rejects  %,d commits", c.rejects(), c.commits()));
    }
    if (web != null) {
      web.close();
      live.close();
    }
    RunnerCounters c = runner.counters();
    progress.finish(c.recordsIn(), String.format("%,d rejects  %,d commits", c.rejects(), c.commits()));
    if (handled) {
      // with our signal handlers the JVM does not exit on a signal: stop the broker here; the hook is not needed any more
      if (b != null) {
        b.stop();
      }
      try {
        Runtime.getRuntime().removeShutdownHook(stopper);
      } catch (IllegalStateException shuttingDown) {
        // the JVM is already exiting (a second signal): the hook finishes the stop
      }
    }
    if (runner.failure() != null) {
      System.err.println("runnel run: " + runner.failure());
      return 2;
    }
    return 0;
  }

  /**
   * SIGTERM and SIGINT stop the runner cleanly (the open transaction committed) and {@code run} then exits
   * with 0, as after any clean stop; without this handler the JVM's own exit on a signal gives 143 or 130
   * although nothing went wrong. A second signal while stopping exits at once with the signal's usual code.
   *
   * @return false when the signal handlers cannot be installed (the shutdown hook then stops the runner)
   */
  private static boolean stopOnSignals(ExactlyOnceRunner runner) {
    java.util.concurrent.atomic.AtomicBoolean stopping = new java.util.concurrent.atomic.AtomicBoolean();
    try {
      for (String name : new String[] {"TERM", "INT"}) {
        sun.misc.Signal.handle(new sun.misc.Signal(name), sig -> {
          if (!stopping.compareAndSet(false, true)) {
            Runtime.getRuntime().halt(128 + sig.getNumber());
          }
          Thread t = new Thread(runner::close, "runnel-stop-signal");
          t.setDaemon(true);
          t.start();
        });
      }
      return true;
    } catch (IllegalArgumentException | UnsupportedOperationException | LinkageError e) {
      return false;
    }
  }
}
