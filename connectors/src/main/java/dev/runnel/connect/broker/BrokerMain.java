package dev.runnel.connect.broker;

import java.nio.file.Paths;
import java.util.Map;

/**
 * Starts the embedded broker alone until SIGTERM / Ctrl-C (the later {@code broker} verb of the command line).
 * <pre>  BrokerMain FOLDER [PORT [CONTROLLER_PORT]]</pre>
 * Prints {@code bootstrap.servers=127.0.0.1:PORT} when ready. Exit code 1 when the broker cannot start, 64 for bad arguments.
 */
public final class BrokerMain {
  private BrokerMain() {}

  public static void main(String[] args) throws Exception {
    if (args.length < 1 || args.length > 3) {
      System.err.println("usage: BrokerMain FOLDER [PORT [CONTROLLER_PORT]]   (port 0 = the remembered port if free, else any free port)");
      System.exit(64);
    }
    int port = args.length > 1 ? Integer.parseInt(args[1]) : 0;
    int cport = args.length > 2 ? Integer.parseInt(args[2]) : 0;
    EmbeddedBroker broker = new EmbeddedBroker(Paths.get(args[0]), port, cport, Map.of(), EmbeddedBroker.DEFAULT_START_TIMEOUT, "512m");
    try {
      broker.start();
    } catch (java.io.IOException e) {
      System.err.println(e.getMessage());
      System.exit(1);
    }
    System.out.println("bootstrap.servers=" + broker.bootstrapServers());
    System.out.println("data folder " + broker.folder() + ", log " + broker.logFile() + "; Ctrl-C stops the broker");
    while (broker.isRunning()) Thread.sleep(1000);
    System.err.println("the broker exited; see " + broker.logFile());
    System.exit(1);
  }
}
