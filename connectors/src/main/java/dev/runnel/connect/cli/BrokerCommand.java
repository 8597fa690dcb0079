package dev.runnel.connect.cli;

import dev.runnel.connect.broker.EmbeddedBroker;
import java.nio.file.Path;
import java.time.Duration;
import java.util.Map;
import java.util.concurrent.Callable;
import java.util.concurrent.CountDownLatch;
import picocli.CommandLine.Command;
import picocli.CommandLine.Option;

/** Starts the embedded broker alone, until Ctrl-C. */
@Command(name = "broker", mixinStandardHelpOptions = true,
    description = {"Start the embedded single-node Kafka broker (KRaft) alone, until Ctrl-C.",
        "Its data folder survives restarts, so recorded topics can be replayed later."})
public final class BrokerCommand implements Callable<Integer> {

  @Option(names = "--data-dir", paramLabel = "DIR", defaultValue = ".runnel/broker",
      description = "Data folder (default: ${DEFAULT-VALUE}).")
  Path dataDir;

  @Option(names = "--port", paramLabel = "PORT", defaultValue = "9092",
      description = "Client port on 127.0.0.1; 0 = any free port (default: ${DEFAULT-VALUE}).")
  int port;

  @Override
  public Integer call() throws Exception {
    EmbeddedBroker broker = new EmbeddedBroker(dataDir, port, 0, Map.of(), Duration.ofSeconds(90), "768m");
    CountDownLatch stopped = new CountDownLatch(1);
    Runtime.getRuntime().addShutdownHook(new Thread(() -> {
      broker.stop();
      stopped.countDown();
    }, "runnel-broker-stop"));
    broker.start();
    System.out.printf("embedded broker ready: bootstrap servers %s, data in %s, log %s%n",
        broker.bootstrapServers(), broker.folder(), broker.logFile());
    System.out.println("Ctrl-C to stop.");
    stopped.await();
    return 0;
  }
}
