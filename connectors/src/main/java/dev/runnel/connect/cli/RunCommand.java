package dev.runnel.connect.cli;

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
        "Stops cleanly on Ctrl-C / SIGTERM (the open transaction is committed, never half) and prints what it did."})
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
    LivePipeline p = LivePipeline.connect(cfg, new LivePipeline.Options(cluster.bootstrapServers, brokerData.dataDir, -1,
        instanceId, webPort, !noWeb, false, "runnel"), System.err);
    p.stopOnShutdown();
    p.startRunner();
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
}
