package dev.runnel.connect.cli;

import dev.runnel.connect.launch.SharedTerminal;
import dev.runnel.connect.text.TerminalText;
import picocli.CommandLine;
import picocli.CommandLine.Command;

/** The {@code runnel} command line: one verb per job. */
@Command(name = "runnel",
    mixinStandardHelpOptions = true,
    versionProvider = Main.Version.class,
    description = "Streaming online-learning featurizer: featurize events from Kafka, predict, learn by "
        + "recursive least squares, publish predictions and coefficient snapshots exactly once.",
    subcommands = {
        RunCommand.class,
        DemoCommand.class,
        ReplayCommand.class,
        DriftCommand.class,
        BrokerCommand.class,
        BacktestCommand.class,
        RecordCommand.class,
        LoadCommand.class,
        CommandLine.HelpCommand.class
    })
public final class Main implements Runnable {

  @CommandLine.Spec
  CommandLine.Model.CommandSpec spec;

  @Override
  public void run() {
    spec.commandLine().usage(System.out);
  }

  /** Entry point. */
  public static void main(String[] args) {
    SharedTerminal.install(); // log lines and messages never glued onto a progress line
    System.exit(commandLine().execute(args));
  }

  /** The configured command line (shared by main and tests). */
  public static CommandLine commandLine() {
    CommandLine cl = new CommandLine(new Main());
    cl.setExecutionExceptionHandler((ex, cmd, parse) -> {
      // user-facing failures carry a message that names the key or field and the fix
      cmd.getErr().println("runnel " + cmd.getCommandName() + ": " + TerminalText.safe(messageOf(ex)));
      if (System.getenv("RUNNEL_DEBUG") != null) {
        ex.printStackTrace(cmd.getErr());
      }
      return 2;
    });
    return cl;
  }

  static String messageOf(Throwable ex) {
    String m = ex.getMessage();
    return m == null || m.isBlank() ? ex.getClass().getSimpleName() : m;
  }

  /** Version from the jar manifest, if any. */
  static final class Version implements CommandLine.IVersionProvider {
    @Override
    public String[] getVersion() {
      String v = Main.class.getPackage().getImplementationVersion();
      return new String[] {"runnel " + (v == null ? "(development build)" : v)};
    }
  }
}
