package dev.runnel.connect.web;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.sun.net.httpserver.HttpExchange;
import com.sun.net.httpserver.HttpServer;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.net.BindException;
import java.net.InetSocketAddress;
import java.net.NetworkInterface;
import java.nio.charset.StandardCharsets;
import java.util.HashSet;
import java.util.List;
import java.util.Locale;
import java.util.Set;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.LinkedBlockingQueue;
import java.util.concurrent.ThreadPoolExecutor;
import java.util.concurrent.TimeUnit;

/**
 * The live web view: the JDK's HTTP server with two routes, {@code /} (one static HTML page with
 * inline CSS and JavaScript that draws SVG charts) and {@code /api/state} (the JSON document of
 * {@link LiveState#stateJson()}; {@code ?columns=a,b} asks for those columns' coefficient paths,
 * {@code series=s} or {@code all_series=1} for the predictions of one series or of all, see
 * {@link LiveState#stateJson(List, String, boolean)}). Read only; bound to 127.0.0.1 unless configured otherwise.
 *
 * <p>Hardening: a request is answered only when its {@code Host} header names a loopback name
 * ({@code localhost}, {@code 127.0.0.1}, {@code ::1}), the bound address, or a name listed in
 * {@code web.allowed_hosts}; anything else gets 403, so a page from elsewhere that rebinds its own
 * DNS name to this machine cannot read the state. A connection that does not deliver its request
 * within {@value #MAX_REQUEST_SECONDS} s, or does not take its response within
 * {@value #MAX_RESPONSE_SECONDS} s, is closed (the JDK server's {@code sun.net.httpserver.maxReqTime}
 * and {@code maxRspTime}, set here unless given on the command line), and requests run on up to
 * {@value #THREADS} threads, so a few half-open connections cannot hold every thread (a flood of more
 * than that can still delay answers by up to {@value #MAX_REQUEST_SECONDS} s at a time).
 */
public final class WebView implements AutoCloseable {

  /** The page, shipped as a resource. */
  public static final String PAGE_RESOURCE = "/dev/runnel/connect/web/index.html";
  /** Seconds a client has to send its whole request. */
  static final long MAX_REQUEST_SECONDS = 10;
  /** Seconds a client has to take the whole response. */
  static final long MAX_RESPONSE_SECONDS = 30;
  /** Most request threads. */
  static final int THREADS = 16;

  static {
    // read once, when the JDK server's configuration class loads (the first server of the JVM);
    // the JDK default for both is "forever", which is how one half-open connection held a thread for good
    if (System.getProperty("sun.net.httpserver.maxReqTime") == null) {
      System.setProperty("sun.net.httpserver.maxReqTime", Long.toString(MAX_REQUEST_SECONDS));
    }
    if (System.getProperty("sun.net.httpserver.maxRspTime") == null) {
      System.setProperty("sun.net.httpserver.maxRspTime", Long.toString(MAX_RESPONSE_SECONDS));
    }
    // the server writes a response's headers and its body as two segments; with Nagle's algorithm the body
    // waits for the client's delayed ACK of the headers (about 40 ms on Linux): measured p90 45 ms for a
    // forecast before this, about 1 ms after (ServiceBenchmark, docs/performance.md)
    if (System.getProperty("sun.net.httpserver.nodelay") == null) {
      System.setProperty("sun.net.httpserver.nodelay", "true");
    }
  }

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final List<String> LOOPBACK_NAMES = List.of("localhost", "127.0.0.1", "::1");

  private final HttpServer server;
  private final ExecutorService pool;
  private final LiveState state;
  private final byte[] page;
  private final Set<String> allowedHosts = new HashSet<>();
  private final WebAccess access;
  private final Service service;
  private final ServiceMetrics metrics;

  /** Largest {@code /forecast} body, in bytes (413 beyond). */
  static final int MAX_FORECAST_BODY_BYTES = 1 << 20;
  /** Most records in one {@code /forecast} request (413 beyond). */
  static final int MAX_FORECAST_RECORDS = 1000;

  private WebView(HttpServer server, LiveState state, String bind, List<String> allowedHosts, WebAccess access, Service service,
                  ServiceMetrics metrics) {
    this.server = server;
    this.state = state;
    this.access = access;
    this.service = service;
    this.metrics = metrics;
    this.page = loadPage();
    this.allowedHosts.addAll(LOOPBACK_NAMES);
    this.allowedHosts.add(bind.toLowerCase(Locale.ROOT));
    for (String h : allowedHosts) this.allowedHosts.add(h.toLowerCase(Locale.ROOT));
    // threads made on demand up to THREADS and dropped when idle: the JDK server reads each request on
    // these threads, so a client that sends half a request holds one until maxReqTime closes it
    ThreadPoolExecutor p = new ThreadPoolExecutor(THREADS, THREADS, 30, TimeUnit.SECONDS, new LinkedBlockingQueue<>(), r -> {
      Thread t = new Thread(r, "runnel-web");
      t.setDaemon(true);
      return t;
    });
    p.allowCoreThreadTimeOut(true);
    this.pool = p;
    server.setExecutor(pool);
    server.createContext("/", this::page);
    server.createContext("/api/state", this::api);
    server.createContext("/health", this::health);
    server.createContext("/ready", this::ready);
    server.createContext("/metrics", this::metrics);
    server.createContext("/forecast", this::forecast);
  }

  /**
   * Starts serving. When {@code port} is taken and {@code fallBackToFreePort} is set, any free port is used instead.
   *
   * @param bind address to listen on (web.bind)
   * @param port port (web.port); 0 = any free port
   * @param state what to serve; the caller starts and closes it
   * @throws IOException if the address cannot be bound
   */
  public static WebView start(String bind, int port, boolean fallBackToFreePort, LiveState state) throws IOException {
    return start(bind, port, fallBackToFreePort, List.of(), state);
  }

  /**
   * As {@link #start(String, int, boolean, LiveState)}, also answering requests whose {@code Host} names one of
   * {@code allowedHosts} (web.allowed_hosts).
   *
   * @throws IllegalArgumentException if {@code bind} does not resolve (names web.bind)
   */
  public static WebView start(String bind, int port, boolean fallBackToFreePort, List<String> allowedHosts, LiveState state)
      throws IOException {
    return start(bind, port, fallBackToFreePort, allowedHosts, state, WebAccess.open(), null, null);
  }

  /**
   * As {@link #start(String, int, boolean, List, LiveState)}, also serving {@code /health}, {@code /ready},
   * {@code /metrics} and {@code /forecast} for a pipeline running in this process (docs/operations.md), with
   * a bearer token when {@code access} has one.
   *
   * @param access the token; without one only a loopback address may be bound
   * @param service the running pipeline; null: those four routes answer 404
   * @param metrics its metrics (made before the runner starts); null with a null service
   * @throws IllegalArgumentException when {@code bind} is not a loopback address and there is no token (names web.bind)
   */
  public static WebView start(String bind, int port, boolean fallBackToFreePort, List<String> allowedHosts, LiveState state,
                              WebAccess access, Service service, ServiceMetrics metrics) throws IOException {
    InetSocketAddress address = bindAddress(bind, port);
    HttpServer s;
    try {
      s = create(address, access);
    } catch (BindException e) {
      if (!address.getAddress().isAnyLocalAddress() && NetworkInterface.getByInetAddress(address.getAddress()) == null) {
        throw new BindException("web.bind: " + bind + " (" + address.getAddress().getHostAddress() + ") is not an address of this"
            + " machine; use 127.0.0.1, 0.0.0.0 for all, or one of this machine's addresses");
      }
      if (!fallBackToFreePort || port == 0) {
        throw new BindException("web.port: " + bind + ":" + port + " is taken (" + e.getMessage()
            + "); choose another port, or 0 for any free port");
      }
      s = create(new InetSocketAddress(address.getAddress(), 0), access);
    }
    try {
      access.checkBind(bind, address);
    } catch (IllegalArgumentException e) {
      s.stop(0);
      throw e;
    }
    WebView v = new WebView(s, state, bind, allowedHosts, access, service, metrics);
    s.start();
    return v;
  }

  /** A plain server, or one speaking TLS through the JDK when {@code access} has a context. */
  private static HttpServer create(InetSocketAddress address, WebAccess access) throws IOException {
    if (access.tls() == null) {
      return HttpServer.create(address, 16);
    }
    com.sun.net.httpserver.HttpsServer https = com.sun.net.httpserver.HttpsServer.create(address, 16);
    https.setHttpsConfigurator(new com.sun.net.httpserver.HttpsConfigurator(access.tls()));
    return https;
  }

  /**
   * The address to listen on, resolved now so that a name that does not resolve is reported by key before
   * anything starts.
   *
   * @throws IllegalArgumentException if {@code bind} does not resolve
   */
  public static InetSocketAddress bindAddress(String bind, int port) {
    InetSocketAddress a = new InetSocketAddress(bind, port);
    if (a.isUnresolved()) {
      throw new IllegalArgumentException("web.bind: " + bind + " does not resolve to an address; use an IP address of this machine"
          + " (127.0.0.1, 0.0.0.0 for all) or a host name that resolves here");
    }
    return a;
  }

  /** The port actually bound. */
  public int port() {
    return server.getAddress().getPort();
  }

  /** The page's address, e.g. {@code http://127.0.0.1:8642/} ({@code https://} with TLS). */
  public String url() {
    String host = server.getAddress().getHostString();
    if (host.contains(":")) {
      host = "[" + host + "]";
    }
    return (server instanceof com.sun.net.httpserver.HttpsServer ? "https://" : "http://") + host + ":" + port() + "/";
  }

  /** The Host header's name (port and IPv6 brackets removed, lower case), or null without one. */
  static String hostName(String header) {
    if (header == null) return null;
    String h = header.trim().toLowerCase(Locale.ROOT);
    if (h.startsWith("[")) {
      int end = h.indexOf(']');
      return end < 0 ? h : h.substring(1, end);
    }
    int colon = h.indexOf(':');
    if (colon >= 0 && h.indexOf(':', colon + 1) < 0) h = h.substring(0, colon);
    return h;
  }

  /** False (and a 403 sent) when the Host header names no allowed host. */
  private boolean hostAllowed(HttpExchange x) throws IOException {
    String name = hostName(x.getRequestHeaders().getFirst("Host"));
    if (name != null && allowedHosts.contains(name)) return true;
    byte[] body = ("this view answers only requests for " + new java.util.TreeSet<>(allowedHosts)
        + "; add the name you opened it by to web.allowed_hosts\n").getBytes(StandardCharsets.UTF_8);
    x.getResponseHeaders().set("Content-Type", "text/plain; charset=utf-8");
    x.sendResponseHeaders(403, body.length);
    try (OutputStream out = x.getResponseBody()) {
      out.write(body);
    }
    return false;
  }

  /**
   * Whether a request may be answered (else 401 or 403 was sent): with a token, the request must carry it
   * (a page elsewhere that rebinds its DNS name to this machine cannot, so the Host check is not needed); without
   * one, its Host header must name an allowed host.
   */
  private boolean admitted(HttpExchange x) throws IOException {
    if (!access.hasToken()) return hostAllowed(x);
    if (access.allows(x.getRequestHeaders().getFirst("Authorization"))) return true;
    x.getResponseHeaders().set("WWW-Authenticate", "Bearer realm=\"runnel\"");
    sendAny(x, 401, "text/plain; charset=utf-8", ("this server needs the bearer token: send the header"
        + " `Authorization: Bearer <token>` (the token is the value of " + WebAccess.TOKEN_ENV + " or of the file named by"
        + " web.token_file where the pipeline runs)\n").getBytes(StandardCharsets.UTF_8));
    return false;
  }

  private void page(HttpExchange x) throws IOException {
    // the page itself holds no data (it asks /api/state, which needs the token when there is one), so it is
    // served without the token: a browser cannot add the header to a navigation; the page asks for it
    if (!access.hasToken() && !hostAllowed(x)) return;
    if (!x.getRequestURI().getPath().equals("/") && !x.getRequestURI().getPath().equals("/index.html")) {
      send(x, 404, "text/plain; charset=utf-8", "not found; the page is at /\n".getBytes(StandardCharsets.UTF_8));
      return;
    }
    send(x, 200, "text/html; charset=utf-8", page);
  }

  private void api(HttpExchange x) throws IOException {
    if (!admitted(x)) return;
    String q = x.getRequestURI().getRawQuery();
    byte[] body = JSON.writeValueAsBytes(state.stateJson(pickedColumns(q), param(q, "series"), "1".equals(param(q, "all_series"))));
    send(x, 200, "application/json", body);
  }

  /** The URL-decoded value of {@code name=value} in a query string; null when absent. */
  static String param(String rawQuery, String name) {
    if (rawQuery == null) {
      return null;
    }
    for (String part : rawQuery.split("&")) {
      if (part.startsWith(name + "=")) {
        return java.net.URLDecoder.decode(part.substring(name.length() + 1), StandardCharsets.UTF_8);
      }
    }
    return null;
  }

  /** The column names of {@code columns=a,b} in a query string (URL-encoded, comma-separated); empty when absent. */
  static List<String> pickedColumns(String rawQuery) {
    if (rawQuery == null) {
      return List.of();
    }
    for (String part : rawQuery.split("&")) {
      if (part.startsWith("columns=")) {
        List<String> out = new java.util.ArrayList<>();
        for (String c : part.substring("columns=".length()).split(",")) {
          String name = java.net.URLDecoder.decode(c, StandardCharsets.UTF_8);
          if (!name.isEmpty() && out.size() < LiveState.MAX_PICKED) {
            out.add(name);
          }
        }
        return out;
      }
    }
    return List.of();
  }

  /**
   * {@code /health}: 200 while the process serves and the runner has not stopped on an error, else 503. No
   * token and no Host check: it tells nothing but that.
   */
  private void health(HttpExchange x) throws IOException {
    String failure = service == null ? null : service.runner().failure();
    if (failure == null) {
      send(x, 200, "text/plain; charset=utf-8", "ok\n".getBytes(StandardCharsets.UTF_8));
    } else {
      send(x, 503, "text/plain; charset=utf-8", "the runner stopped on an error; see the log\n".getBytes(StandardCharsets.UTF_8));
    }
  }

  /** {@code /ready}: 200 when the partitions are assigned and restored, else 503 saying why. */
  private void ready(HttpExchange x) throws IOException {
    if (!admitted(x) || !served(x)) return;
    String why = service.runner().notReady();
    if (why == null) {
      int n = service.runner().heldPartitions().size();
      send(x, 200, "text/plain; charset=utf-8", ("ready: " + n + " partition(s) held and restored\n").getBytes(StandardCharsets.UTF_8));
    } else {
      send(x, 503, "text/plain; charset=utf-8", ("not ready: " + why + "\n").getBytes(StandardCharsets.UTF_8));
    }
  }

  /** {@code /metrics}: the Prometheus text exposition format ({@link ServiceMetrics}). */
  private void metrics(HttpExchange x) throws IOException {
    if (!admitted(x) || !served(x)) return;
    send(x, 200, metrics.contentType(), metrics.scrape());
  }

  /** False (and 404 sent) when no pipeline runs in this process. */
  private boolean served(HttpExchange x) throws IOException {
    if (service != null && metrics != null) return true;
    send(x, 404, "text/plain; charset=utf-8", "no pipeline runs in this process\n".getBytes(StandardCharsets.UTF_8));
    return false;
  }

  /**
   * {@code POST /forecast}: one record (a JSON object) or a JSON array of records, each without its target;
   * answers each with the forecast of the partition that owns its key (docs/operations.md, "Forecasts on
   * request"). One record: its answer object with the answer's status. An array: an array of answers, with
   * 400 when any record was bad, else 503 when any partition was not ready, else 421 when any partition is
   * held elsewhere, else 200.
   */
  private void forecast(HttpExchange x) throws IOException {
    if (!admitted(x) || !served(x)) return;
    try {
      answerForecast(x);
    } catch (RuntimeException e) {
      // a defect, not bad input (that is a 400): said without the record, whose text may be anything
      sendAny(x, 500, "text/plain; charset=utf-8", ("the forecast failed (" + e.getClass().getName() + "); the stream is not"
          + " affected; see the log\n").getBytes(StandardCharsets.UTF_8));
      org.slf4j.LoggerFactory.getLogger(WebView.class).warn("a forecast request failed", e);
    }
  }

  private void answerForecast(HttpExchange x) throws IOException {
    if (!"POST".equals(x.getRequestMethod())) {
      x.getResponseHeaders().set("Allow", "POST");
      sendAny(x, 405, "text/plain; charset=utf-8", "only POST, with one JSON record or an array of them\n"
          .getBytes(StandardCharsets.UTF_8));
      return;
    }
    byte[] body;
    try (InputStream in = x.getRequestBody()) {
      body = in.readNBytes(MAX_FORECAST_BODY_BYTES + 1);
    }
    if (body.length > MAX_FORECAST_BODY_BYTES) {
      sendAny(x, 413, "text/plain; charset=utf-8", ("the body is larger than " + MAX_FORECAST_BODY_BYTES
          + " bytes; send fewer records per request\n").getBytes(StandardCharsets.UTF_8));
      return;
    }
    long arrival = System.currentTimeMillis();
    int first = 0;
    while (first < body.length && (body[first] == ' ' || body[first] == '\n' || body[first] == '\r' || body[first] == '\t')) {
      first++;
    }
    java.io.ByteArrayOutputStream out = new java.io.ByteArrayOutputStream(256);
    int code;
    try (com.fasterxml.jackson.core.JsonGenerator g = JSON.getFactory().createGenerator(out)) {
      if (first < body.length && body[first] == '[') {
        com.fasterxml.jackson.databind.JsonNode list;
        try {
          list = JSON.readTree(body);
        } catch (IOException e) {
          list = null;
        }
        if (list == null || !list.isArray()) {
          writeAnswer(g, new Service.Answer(Service.Outcome.REJECTED, -1, "malformed_json",
              "the body starts with [ but is not a JSON array", null));
          code = 400;
        } else if (list.size() > MAX_FORECAST_RECORDS) {
          sendAny(x, 413, "text/plain; charset=utf-8", ("more than " + MAX_FORECAST_RECORDS + " records in one request ("
              + list.size() + "); send them in several\n").getBytes(StandardCharsets.UTF_8));
          return;
        } else {
          boolean rejected = false;
          boolean notReady = false;
          boolean notHeld = false;
          g.writeStartArray();
          for (com.fasterxml.jackson.databind.JsonNode item : list) {
            Service.Answer a = service.forecast(JSON.writeValueAsBytes(item), arrival);
            rejected |= a.outcome() == Service.Outcome.REJECTED;
            notReady |= a.outcome() == Service.Outcome.NOT_READY;
            notHeld |= a.outcome() == Service.Outcome.NOT_HELD;
            writeAnswer(g, a);
          }
          g.writeEndArray();
          code = rejected ? 400 : notReady ? 503 : notHeld ? 421 : 200;
        }
      } else {
        Service.Answer a = service.forecast(body, arrival);
        writeAnswer(g, a);
        code = a.outcome().httpStatus();
      }
    }
    out.write('\n');
    sendAny(x, code, "application/json", out.toByteArray());
  }

  private static void writeAnswer(com.fasterxml.jackson.core.JsonGenerator g, Service.Answer a) throws IOException {
    g.writeStartObject();
    g.writeNumberField("status", a.outcome().httpStatus());
    if (a.partition() >= 0) {
      g.writeNumberField("partition", a.partition());
    } else {
      g.writeNullField("partition");
    }
    switch (a.outcome()) {
      case FORECAST -> {
        g.writeFieldName("prediction");
        g.writeRawValue(new String(a.prediction(), StandardCharsets.UTF_8));
      }
      case REJECTED -> {
        g.writeStringField("reason", a.reason());
        g.writeStringField("detail", a.detail());
      }
      default -> g.writeStringField("detail", a.detail());
    }
    g.writeEndObject();
  }

  private static void sendAny(HttpExchange x, int code, String type, byte[] body) throws IOException {
    x.getResponseHeaders().set("Content-Type", type);
    x.getResponseHeaders().set("Cache-Control", "no-store");
    x.sendResponseHeaders(code, body.length);
    try (OutputStream out = x.getResponseBody()) {
      out.write(body);
    }
  }

  private static void send(HttpExchange x, int code, String type, byte[] body) throws IOException {
    if (!"GET".equals(x.getRequestMethod()) && !"HEAD".equals(x.getRequestMethod())) {
      code = 405;
      body = "only GET\n".getBytes(StandardCharsets.UTF_8);
      type = "text/plain; charset=utf-8";
    }
    x.getResponseHeaders().set("Content-Type", type);
    x.getResponseHeaders().set("Cache-Control", "no-store");
    x.sendResponseHeaders(code, body.length);
    try (OutputStream out = x.getResponseBody()) {
      out.write(body);
    }
  }

  private static byte[] loadPage() {
    try (InputStream in = WebView.class.getResourceAsStream(PAGE_RESOURCE)) {
      if (in == null) {
        throw new IllegalStateException("the web page " + PAGE_RESOURCE + " is missing from the classpath");
      }
      return in.readAllBytes();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  @Override
  public void close() {
    server.stop(0);
    pool.shutdownNow();
  }
}
