package dev.runnel.connect.cli;

import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.demo.DemoSummary;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** The one-command demo on the embedded broker. */
@Command(name = "demo", mixinStandardHelpOptions = true,
    description = {"Start the embedded Kafka broker, publish the invented Quillmarsh Charging feed to it, run the "
        + "pipeline on it exactly once, show live progress, and end with what the model found.",
        "Repeated runs use new topics (run numbers); the broker's data folder is kept unless --fresh.",
        "With --bootstrap-servers, uses that cluster instead of starting the embedded broker."})
public final class DemoCommand implements Callable<Integer> {

  @Option(names = "--days", defaultValue = "42", paramLabel = "N",
      description = "Days of invented hourly data (default: ${DEFAULT-VALUE}).")
  int days;

  @Option(names = "--seed", defaultValue = "20260105", paramLabel = "S", description = "Generator seed (default: ${DEFAULT-VALUE}).")
  long seed;

  @Option(names = "--rate", defaultValue = "8000", paramLabel = "RECORDS_PER_S",
      description = "Publishing pace in records per second, 0 = as fast as possible (default: ${DEFAULT-VALUE}).")
  double rate;

  @Option(names = "--data-dir", defaultValue = ".runnel/demo", paramLabel = "DIR",
      description = "Data folder of the embedded broker, kept between runs (default: ${DEFAULT-VALUE}).")
  Path dataDir;

  @Option(names = "--fresh", description = "Delete the data folder first.")
  boolean fresh;

  @Mixin Options.Cluster cluster;
  @Mixin Options.Quiet quiet;

  @Option(names = "--web-port", defaultValue = "8642", paramLabel = "PORT",
      description = "Port of the live web view on 127.0.0.1; a taken port falls back to a free one; 0 = any free port (default: ${DEFAULT-VALUE}).")
  int webPort;

  @Option(names = "--no-web", description = "Do not serve the live web view.")
  boolean noWeb;

  @Option(names = "--linger", defaultValue = "0", paramLabel = "SECONDS",
      description = "Keep the live view up this many seconds after the summary (default: ${DEFAULT-VALUE}: end at once).")
  long linger;

  @Override
  public Integer call() throws Exception {
    DemoSummary s = DemoRun.run(new DemoRun.Options(dataDir, fresh, days, seed, rate, quiet.quiet, cluster.bootstrapServers,
        noWeb ? -1 : webPort, linger),
        System.out, System.err);
    return s.tariffChangeFound() ? 0 : 1;
  }
}
