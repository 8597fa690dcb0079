package dev.runnel.connect.cli;

import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.launch.LivePipeline;
import dev.runnel.connect.launch.Progress;
import dev.runnel.connect.text.TerminalText;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** The main job: consume the input topic, run the pipeline per partition, publish exactly once. */
@Command(name = "run", mixinStandardHelpOptions = true,
    description = {"Consume the configured input topic and run the pipeline on every partition, publishing "
        + "<name>.predictions, <name>.coefficients, <name>.rejects and <name>.state exactly once.",
        "Without kafka.bootstrap_servers in the configuration, starts the embedded broker.",
        "Stops cleanly on Ctrl-C / SIGTERM (the open transaction is committed, never half) and exits with 0;"
            + " 2 when the runner stopped on an error."})
public final class RunCommand implements Callable<Integer> {

  @Mixin Options.PipelineFile pipeline;
  @Mixin Options.Cluster cluster;
  @Mixin Options.BrokerData brokerData;
  @Mixin Options.Quiet quiet;

  @Option(names = "--instance-id", paramLabel = "ID", defaultValue = "0",
      description = "Stable id of this instance, unique among the instances of one pipeline (default: ${DEFAULT-VALUE}).")
  String instanceId;

  @Option(names = "--web-port", paramLabel = "PORT",
      description = "Port of the live web view (overrides web.port; 0 = any free port).")
  Integer webPort;

  @Option(names = "--no-web", description = "Do not serve the live web view (overrides web.enabled).")
  boolean noWeb;

  @Override
  public Integer call() throws Exception {
    PipelineConfig cfg = Launch.warn(ConfigLoader.load(pipeline.config), System.err);
    dev.runnel.connect.pipeline.AvroValues.of(cfg); // a missing or bad input.avro_schema_file stops here, before any broker
    LivePipeline p = LivePipeline.connect(cfg, new LivePipeline.Options(cluster.bootstrapServers, brokerData.dataDir, -1,
        instanceId, webPort, !noWeb, false, "runnel"), System.err);
    p.stopOnShutdown();
    p.startRunner();
    stopOnSignals(p.runner()); // a clean stop on SIGTERM / Ctrl-C ends with exit code 0, not 143
    System.err.println("runnel: Ctrl-C to stop");
    Progress progress = new Progress(System.err, "records", 0, quiet.quiet);
    p.awaitWithProgress(progress);
    p.close();
    RunnerCounters c = p.runner().counters();
    progress.finish(c.recordsIn(), LivePipeline.progressExtra(c));
    System.err.print(p.summary());
    if (p.runner().failure() != null) {
      System.err.println("runnel run: " + TerminalText.safe(String.valueOf(p.runner().failure())));
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
