package dev.runnel.connect.kafka;

import java.util.LinkedHashMap;
import java.util.Map;

/**
 * A small launcher for tests and experiments: runs an {@link ExactlyOnceRunner} with a {@link ProcessorFactory}
 * loaded by class name until SIGTERM / Ctrl-C (which commits the open transaction and closes cleanly).
 * <pre>
 *   RunnerMain --bootstrap HOST:PORT --name NAME --topic TOPIC --factory CLASS
 *              [--commit-interval-ms N] [--commit-interval-records N] [--instance-id ID] [--property KEY=VALUE]...
 * </pre>
 * Exit code 0 after a clean stop, 2 when the runner stopped on its own (reason on stderr), 64 for bad arguments.
 */
public final class RunnerMain {
  private RunnerMain() {}

  public static void main(String[] args) throws Exception {
    Map<String, String> opts = new LinkedHashMap<>();
    Map<String, String> props = new LinkedHashMap<>();
    for (int i = 0; i < args.length; i++) {
      String a = args[i];
      if (!a.startsWith("--") || i + 1 >= args.length) usage("unexpected argument " + a);
      String v = args[++i];
      if (a.equals("--property")) {
        int eq = v.indexOf('=');
        if (eq <= 0) usage("--property needs KEY=VALUE, got " + v);
        props.put(v.substring(0, eq), v.substring(eq + 1));
      } else {
        opts.put(a.substring(2), v);
      }
    }
    for (String k : new String[] {"bootstrap", "name", "topic", "factory"}) if (!opts.containsKey(k)) usage("--" + k + " is required");
    RunnerSettings s = RunnerSettings.of(opts.get("name"), opts.get("topic"), opts.get("bootstrap"))
        .withClientProperties(props)
        .withCommitInterval(Long.parseLong(opts.getOrDefault("commit-interval-ms", "" + RunnerSettings.DEFAULT_COMMIT_INTERVAL_MS)),
            Integer.parseInt(opts.getOrDefault("commit-interval-records", "" + RunnerSettings.DEFAULT_COMMIT_INTERVAL_RECORDS)))
        .withInstanceId(opts.getOrDefault("instance-id", "0"));
    ProcessorFactory factory;
    try {
      factory = (ProcessorFactory) Class.forName(opts.get("factory")).getDeclaredConstructor().newInstance();
    } catch (ReflectiveOperationException | ClassCastException e) {
      usage("--factory " + opts.get("factory") + " must name a ProcessorFactory class with a public no-argument constructor (" + e + ")");
      return;
    }
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, factory);
    Runtime.getRuntime().addShutdownHook(new Thread(runner::close, "runner-stop"));
    runner.run();
    if (runner.failure() != null) {
      System.err.println("runner stopped: " + runner.failure());
      System.exit(2);
    }
  }

  private static void usage(String problem) {
    System.err.println(problem);
    System.err.println("usage: RunnerMain --bootstrap HOST:PORT --name NAME --topic TOPIC --factory CLASS"
        + " [--commit-interval-ms N] [--commit-interval-records N] [--instance-id ID] [--property KEY=VALUE]...");
    System.exit(64);
  }
}
