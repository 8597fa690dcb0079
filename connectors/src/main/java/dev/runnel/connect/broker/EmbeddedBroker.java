package dev.runnel.connect.broker;

import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.net.InetSocketAddress;
import java.net.ServerSocket;
import java.net.Socket;
import java.net.URI;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Properties;
import java.util.Set;
import java.util.concurrent.TimeUnit;
import java.util.jar.JarFile;
import java.util.jar.Manifest;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.DescribeClusterOptions;

/**
 * A real single-node Apache Kafka broker in KRaft mode (broker and controller in one process), run as
 * a child JVM from the Kafka broker jars found on this JVM's classpath.
 *
 * <p>Data folder layout ({@code folder}):
 * <pre>
 *   server.properties   written at every start (ports may change)
 *   log4j2.properties   keeps the child quiet (warnings and errors only)
 *   ports.properties    the ports last used; a restart reuses them when they are free
 *   cluster.id          the cluster id the data folder was formatted with
 *   data/               the broker's log.dirs (formatted once; survives restarts)
 *   broker.log          the child's stdout and stderr (appended)
 * </pre>
 *
 * <p>Lifecycle: {@link #start()} formats the data folder if it is new, launches the child and returns
 * when the port accepts connections and an AdminClient {@code describeCluster} succeeds.
 * {@link #stop()} asks the child to shut down (SIGTERM), waits, then kills it after a timeout.
 * {@link #kill()} kills at once (SIGKILL), as a crash would. A JVM shutdown hook stops a running child.
 * Thread contract: all methods are synchronized; any thread may call them.
 */
public final class EmbeddedBroker implements AutoCloseable {

  /** Default maximum wait for the broker to become ready. */
  /**
   * The broker settings Runnel's single-node brokers need, stated once: the embedded broker writes
   * them into its {@code server.properties}, and the tests' container broker passes them to the
   * image as {@code KAFKA_*} variables. Transactions and consumer offsets need a replication factor
   * and a minimum in-sync count of 1 on one node; a group's first join need not wait.
   */
  public static final Map<String, String> SINGLE_NODE_SETTINGS = singleNodeSettings();

  private static Map<String, String> singleNodeSettings() {
    Map<String, String> p = new LinkedHashMap<>();
    p.put("offsets.topic.replication.factor", "1");
    p.put("offsets.topic.num.partitions", "5");
    p.put("transaction.state.log.replication.factor", "1");
    p.put("transaction.state.log.min.isr", "1");
    p.put("transaction.state.log.num.partitions", "5");
    p.put("group.initial.rebalance.delay.ms", "0");
    p.put("num.partitions", "1");
    return Collections.unmodifiableMap(p);
  }

  public static final Duration DEFAULT_START_TIMEOUT = Duration.ofSeconds(90);
  /** Default wait for a graceful stop before the child is killed. */
  public static final Duration DEFAULT_STOP_TIMEOUT = Duration.ofSeconds(30);

  private static final int LOG_TAIL_LINES = 30;

  private final Path folder;
  private final int requestedPort;
  private final int requestedControllerPort;
  private final Map<String, String> extraProperties;
  private final Duration startTimeout;
  private final String maxHeap;

  private Process process;
  private Thread shutdownHook;
  private int port;
  private int controllerPort;

  /**
   * A broker with its data in {@code folder} on free ports (remembered for restarts).
   * @param folder data folder; created when missing. Not modified beyond the layout above.
   */
  public EmbeddedBroker(Path folder) {
    this(folder, 0, 0, Map.of(), DEFAULT_START_TIMEOUT, "512m");
  }

  /**
   * @param folder data folder; created when missing
   * @param port client (PLAINTEXT) port on 127.0.0.1; 0 = the remembered port if free, else a free one
   * @param controllerPort KRaft controller port; 0 = as for {@code port}
   * @param extraProperties broker settings added to (and overriding) the generated server.properties. Not modified.
   * @param startTimeout maximum wait in {@link #start()}
   * @param maxHeap child heap, as for {@code -Xmx} (e.g. "512m")
   * @throws IllegalArgumentException if a port is outside 0..65535, both ports are equal and non-zero,
   *     or the timeout is not positive
   */
  public EmbeddedBroker(Path folder, int port, int controllerPort, Map<String, String> extraProperties,
      Duration startTimeout, String maxHeap) {
    this.folder = Objects.requireNonNull(folder, "folder must not be null").toAbsolutePath();
    if (port < 0 || port > 65535) throw new IllegalArgumentException("port must be in 0..65535 (0 = pick a free port), got " + port);
    if (controllerPort < 0 || controllerPort > 65535) {
      throw new IllegalArgumentException("controllerPort must be in 0..65535 (0 = pick a free port), got " + controllerPort);
    }
    if (port != 0 && port == controllerPort) throw new IllegalArgumentException("port and controllerPort must differ, both are " + port);
    if (startTimeout == null || startTimeout.isNegative() || startTimeout.isZero()) {
      throw new IllegalArgumentException("startTimeout must be positive, got " + startTimeout);
    }
    this.requestedPort = port;
    this.requestedControllerPort = controllerPort;
    this.extraProperties = Map.copyOf(Objects.requireNonNull(extraProperties, "extraProperties must not be null"));
    this.startTimeout = startTimeout;
    this.maxHeap = Objects.requireNonNull(maxHeap, "maxHeap must not be null");
  }

  /** The data folder. */
  public Path folder() { return folder; }

  /** {@code 127.0.0.1:<port>}; valid after {@link #start()}. */
  public synchronized String bootstrapServers() {
    if (port == 0) throw new IllegalStateException("the embedded broker in " + folder + " has not been started");
    return "127.0.0.1:" + port;
  }

  /** The client port, 0 before the first start. */
  public synchronized int port() { return port; }

  /** The controller port, 0 before the first start. */
  public synchronized int controllerPort() { return controllerPort; }

  /** The child's log file. */
  public Path logFile() { return folder.resolve("broker.log"); }

  /** True while the child process is alive. */
  public synchronized boolean isRunning() { return process != null && process.isAlive(); }

  /**
   * Formats the data folder when new, starts the child JVM and waits until it serves clients.
   * Does nothing if already running.
   * @throws IOException if the folder cannot be written or the broker does not become ready in time
   *     (the message names broker.log and shows its last lines)
   */
  public synchronized void start() throws IOException {
    if (isRunning()) return;
    Files.createDirectories(folder);
    String classpath = childClasspath();
    choosePorts();
    Path config = writeConfig();
    Path dataDir = folder.resolve("data");
    if (!Files.exists(dataDir.resolve("meta.properties"))) {
      Path idFile = folder.resolve("cluster.id");
      String clusterId = Files.exists(idFile) ? Files.readString(idFile).trim() : "";
      if (clusterId.isEmpty()) {
        clusterId = runTool(classpath, List.of("random-uuid")).trim();
        Files.writeString(idFile, clusterId + "\n");
      }
      runTool(classpath, List.of("format", "-t", clusterId, "-c", config.toString()));
    }
    List<String> cmd = new ArrayList<>(javaCommand(classpath));
    cmd.add("kafka.Kafka");
    cmd.add(config.toString());
    appendLog("---- starting broker on 127.0.0.1:" + port + " (controller " + controllerPort + ")");
    ProcessBuilder pb = new ProcessBuilder(cmd).redirectErrorStream(true)
        .redirectOutput(ProcessBuilder.Redirect.appendTo(logFile().toFile()));
    process = pb.start();
    final Process child = process;
    shutdownHook = new Thread(() -> stopProcess(child, DEFAULT_STOP_TIMEOUT), "embedded-broker-stop");
    Runtime.getRuntime().addShutdownHook(shutdownHook);
    awaitReady();
  }

  /** Graceful stop: SIGTERM, wait up to {@link #DEFAULT_STOP_TIMEOUT}, then SIGKILL. Does nothing if not running. */
  public synchronized void stop() {
    if (process == null) return;
    stopProcess(process, DEFAULT_STOP_TIMEOUT);
    forget();
  }

  /** Kills the child at once (SIGKILL), as a crash would; for tests. Does nothing if not running. */
  public synchronized void kill() {
    if (process == null) return;
    process.destroyForcibly();
    waitQuietly(process, DEFAULT_STOP_TIMEOUT);
    forget();
  }

  /** Same as {@link #stop()}. */
  @Override public void close() { stop(); }

  /**
   * Removes the JVM shutdown hook that stops the broker, for a caller whose own hook must finish
   * first with the broker still up (the runner commits its open transaction, then stops the
   * broker). The caller then owns stopping it.
   */
  public synchronized void detachShutdownHook() {
    if (shutdownHook != null) {
      try {
        Runtime.getRuntime().removeShutdownHook(shutdownHook);
      } catch (IllegalStateException alreadyShuttingDown) {
        return; // the hook runs or has run; nothing to undo
      }
      shutdownHook = null;
    }
  }

  // ---------------------------------------------------------------- internals

  private void forget() {
    process = null;
    if (shutdownHook != null) {
      try {
        Runtime.getRuntime().removeShutdownHook(shutdownHook);
      } catch (IllegalStateException alreadyShuttingDown) {
        // the hook runs or has run; nothing to undo
      }
      shutdownHook = null;
    }
  }

  private static void stopProcess(Process p, Duration timeout) {
    if (!p.isAlive()) return;
    p.destroy();
    if (!waitQuietly(p, timeout)) {
      p.destroyForcibly();
      waitQuietly(p, timeout);
    }
  }

  private static boolean waitQuietly(Process p, Duration timeout) {
    try {
      return p.waitFor(timeout.toMillis(), TimeUnit.MILLISECONDS);
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      return !p.isAlive();
    }
  }

  private void choosePorts() throws IOException {
    Path file = folder.resolve("ports.properties");
    Properties remembered = new Properties();
    if (Files.exists(file)) {
      try (InputStream in = Files.newInputStream(file)) { remembered.load(in); }
    }
    port = pick(requestedPort, remembered.getProperty("port"), -1);
    controllerPort = pick(requestedControllerPort, remembered.getProperty("controller.port"), port);
    Properties now = new Properties();
    now.setProperty("port", Integer.toString(port));
    now.setProperty("controller.port", Integer.toString(controllerPort));
    try (var out = Files.newOutputStream(file)) { now.store(out, "ports last used by the embedded broker"); }
  }

  private static int pick(int requested, String remembered, int notThis) throws IOException {
    if (requested != 0) {
      if (!isFree(requested)) {
        throw new IOException("port " + requested + " on 127.0.0.1 is in use (another program, or another broker on this folder?);"
            + " choose another port, or 0 for a free one");
      }
      return requested;
    }
    if (remembered != null) {
      int r = Integer.parseInt(remembered.trim());
      if (r != notThis && isFree(r)) return r;
    }
    for (int attempt = 0; attempt < 20; attempt++) {
      try (ServerSocket s = new ServerSocket(0, 50, java.net.InetAddress.getByName("127.0.0.1"))) {
        int p = s.getLocalPort();
        if (p != notThis) return p;
      }
    }
    throw new IOException("could not find a free port on 127.0.0.1");
  }

  private static boolean isFree(int p) {
    try (ServerSocket s = new ServerSocket()) {
      s.setReuseAddress(true);
      s.bind(new InetSocketAddress("127.0.0.1", p));
      return true;
    } catch (IOException e) {
      return false;
    }
  }

  private Path writeConfig() throws IOException {
    Map<String, String> p = new LinkedHashMap<>();
    p.put("process.roles", "broker,controller");
    p.put("node.id", "1");
    p.put("controller.quorum.voters", "1@127.0.0.1:" + controllerPort);
    p.put("listeners", "PLAINTEXT://127.0.0.1:" + port + ",CONTROLLER://127.0.0.1:" + controllerPort);
    p.put("advertised.listeners", "PLAINTEXT://127.0.0.1:" + port);
    p.put("controller.listener.names", "CONTROLLER");
    p.put("inter.broker.listener.name", "PLAINTEXT");
    p.put("listener.security.protocol.map", "PLAINTEXT:PLAINTEXT,CONTROLLER:PLAINTEXT");
    p.putAll(SINGLE_NODE_SETTINGS);
    p.put("num.network.threads", "2");
    p.put("num.io.threads", "4");
    p.put("log.dirs", folder.resolve("data").toString());
    p.putAll(extraProperties);
    StringBuilder sb = new StringBuilder("# written by Runnel's embedded broker at every start; edit extraProperties instead\n");
    for (Map.Entry<String, String> e : p.entrySet()) sb.append(e.getKey()).append('=').append(e.getValue()).append('\n');
    Path config = folder.resolve("server.properties");
    Files.writeString(config, sb.toString());
    Files.writeString(folder.resolve("log4j2.properties"),
        "status = error\n"
            + "appender.out.type = Console\nappender.out.name = OUT\n"
            + "appender.out.layout.type = PatternLayout\nappender.out.layout.pattern = [%d] %p %m (%c)%n\n"
            + "rootLogger.level = warn\nrootLogger.appenderRef.out.ref = OUT\n");
    return config;
  }

  private List<String> javaCommand(String classpath) {
    Path java = Paths.get(System.getProperty("java.home"), "bin", "java");
    List<String> cmd = new ArrayList<>();
    cmd.add(java.toString());
    cmd.add("-Xmx" + maxHeap);
    cmd.add("-XX:+UseSerialGC");
    cmd.add("-Djava.awt.headless=true");
    cmd.add("-Dlog4j2.configurationFile=" + folder.resolve("log4j2.properties").toUri());
    cmd.add("-Dorg.slf4j.simpleLogger.defaultLogLevel=warn");
    cmd.add("-Dorg.slf4j.simpleLogger.logFile=System.err"); // into broker.log, whatever simplelogger.properties is on the classpath
    cmd.add("-Dkafka.logs.dir=" + folder);
    cmd.add("-cp");
    cmd.add(classpath);
    return cmd;
  }

  private String runTool(String classpath, List<String> args) throws IOException {
    List<String> cmd = new ArrayList<>(javaCommand(classpath));
    cmd.add("kafka.tools.StorageTool");
    cmd.addAll(args);
    Process p = new ProcessBuilder(cmd).redirectErrorStream(true).start();
    byte[] out = p.getInputStream().readAllBytes();
    String text = new String(out, StandardCharsets.UTF_8);
    try {
      if (!p.waitFor(60, TimeUnit.SECONDS)) {
        p.destroyForcibly();
        throw new IOException("kafka.tools.StorageTool " + String.join(" ", args) + " did not finish in 60 s");
      }
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new IOException("interrupted while running kafka.tools.StorageTool", e);
    }
    appendLog("---- StorageTool " + String.join(" ", args) + "\n" + text);
    if (p.exitValue() != 0) {
      throw new IOException("kafka.tools.StorageTool " + String.join(" ", args) + " failed (exit " + p.exitValue()
          + ") for data folder " + folder + ":\n" + text);
    }
    if (args.get(0).equals("random-uuid")) {
      // the uuid is the last non-empty line (logging, if any, comes before it)
      String[] lines = text.trim().split("\\R");
      return lines[lines.length - 1].trim();
    }
    return text;
  }

  private void appendLog(String line) {
    try {
      Files.writeString(logFile(), line + "\n", StandardCharsets.UTF_8,
          java.nio.file.StandardOpenOption.CREATE, java.nio.file.StandardOpenOption.APPEND);
    } catch (IOException ignored) {
      // the log is a help for people, never a reason to fail
    }
  }

  private void awaitReady() throws IOException {
    long deadline = System.nanoTime() + startTimeout.toNanos();
    IOException last = null;
    while (System.nanoTime() < deadline) {
      if (!process.isAlive()) {
        int code = process.exitValue();
        forget();
        throw new IOException("the embedded broker exited with code " + code + " during start; see " + logFile()
            + ". Last lines:\n" + logTail());
      }
      if (accepts(port)) {
        try (Admin admin = Admin.create(Map.of(
            AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, "127.0.0.1:" + port,
            AdminClientConfig.REQUEST_TIMEOUT_MS_CONFIG, 3000,
            AdminClientConfig.DEFAULT_API_TIMEOUT_MS_CONFIG, 5000))) {
          admin.describeCluster(new DescribeClusterOptions().timeoutMs(5000)).nodes().get(6, TimeUnit.SECONDS);
          return;
        } catch (Exception e) {
          last = new IOException(e.toString(), e);
        }
      }
      sleep(200);
    }
    stopProcess(process, Duration.ofSeconds(5));
    forget();
    throw new IOException("the embedded broker in " + folder + " did not become ready on 127.0.0.1:" + port + " within "
        + startTimeout.toSeconds() + " s" + (last == null ? "" : " (last error: " + last.getMessage() + ")")
        + "; see " + logFile() + ". Last lines:\n" + logTail());
  }

  private static boolean accepts(int p) {
    try (Socket s = new Socket()) {
      s.connect(new InetSocketAddress("127.0.0.1", p), 500);
      return true;
    } catch (IOException e) {
      return false;
    }
  }

  private static void sleep(long millis) throws IOException {
    try {
      Thread.sleep(millis);
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new IOException("interrupted while waiting for the embedded broker", e);
    }
  }

  private String logTail() {
    try {
      List<String> lines = Files.readAllLines(logFile(), StandardCharsets.UTF_8);
      return String.join("\n", lines.subList(Math.max(0, lines.size() - LOG_TAIL_LINES), lines.size()));
    } catch (IOException | UncheckedIOException e) {
      return "(cannot read " + logFile() + ": " + e.getMessage() + ")";
    }
  }

  /**
   * The classpath for the child: this JVM's {@code java.class.path}, with the {@code Class-Path} entries of
   * any jar's manifest added (a packaged jar run with {@code java -jar} lists its lib/*.jar only there;
   * Surefire's booter jar does the same).
   * @throws IOException if the Kafka broker classes are not among them
   */
  public static String childClasspath() throws IOException {
    return childClasspath(System.getProperty("java.class.path", ""));
  }

  /** As {@link #childClasspath()} for an explicit classpath string. */
  static String childClasspath(String javaClassPath) throws IOException {
    Set<String> entries = new LinkedHashSet<>();
    for (String e : javaClassPath.split(java.io.File.pathSeparator)) {
      if (!e.isBlank()) expand(Paths.get(e).toAbsolutePath().normalize(), entries);
    }
    boolean found = false;
    for (String e : entries) {
      String name = Paths.get(e).getFileName() == null ? "" : Paths.get(e).getFileName().toString();
      if (name.startsWith("kafka_2.13") || Files.exists(Paths.get(e, "kafka", "Kafka.class"))) { found = true; break; }
    }
    if (!found) {
      throw new IOException("the Kafka broker jars (org.apache.kafka:kafka_2.13 and its dependencies) are not on the classpath "
          + "of this JVM; the embedded broker needs them. Classpath entries seen: " + entries.size());
    }
    return String.join(java.io.File.pathSeparator, entries);
  }

  private static void expand(Path entry, Set<String> out) {
    if (!out.add(entry.toString())) return;
    if (!Files.isRegularFile(entry) || !entry.toString().endsWith(".jar")) return;
    Manifest mf;
    try (JarFile jar = new JarFile(entry.toFile())) {
      mf = jar.getManifest();
    } catch (IOException e) {
      return;
    }
    if (mf == null) return;
    String cp = mf.getMainAttributes().getValue("Class-Path");
    if (cp == null) return;
    URI base = entry.getParent().toUri();
    for (String item : cp.trim().split("\\s+")) {
      if (item.isEmpty()) continue;
      try {
        URI u = base.resolve(item);
        if ("file".equals(u.getScheme())) expand(Paths.get(u).normalize(), out);
      } catch (IllegalArgumentException ignored) {
        // not a file entry; the child cannot use it either
      }
    }
  }
}
