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
 * {@link LiveState#stateJson()}). Read only; bound to 127.0.0.1 unless configured otherwise.
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
  }

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final List<String> LOOPBACK_NAMES = List.of("localhost", "127.0.0.1", "::1");

  private final HttpServer server;
  private final ExecutorService pool;
  private final LiveState state;
  private final byte[] page;
  private final Set<String> allowedHosts = new HashSet<>();

  private WebView(HttpServer server, LiveState state, String bind, List<String> allowedHosts) {
    this.server = server;
    this.state = state;
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
    InetSocketAddress address = bindAddress(bind, port);
    HttpServer s;
    try {
      s = HttpServer.create(address, 16);
    } catch (BindException e) {
      if (!address.getAddress().isAnyLocalAddress() && NetworkInterface.getByInetAddress(address.getAddress()) == null) {
        throw new BindException("web.bind: " + bind + " (" + address.getAddress().getHostAddress() + ") is not an address of this"
            + " machine; use 127.0.0.1, 0.0.0.0 for all, or one of this machine's addresses");
      }
      if (!fallBackToFreePort || port == 0) {
        throw new BindException("web.port: " + bind + ":" + port + " is taken (" + e.getMessage()
            + "); choose another port, or 0 for any free port");
      }
      s = HttpServer.create(new InetSocketAddress(address.getAddress(), 0), 16);
    }
    WebView v = new WebView(s, state, bind, allowedHosts);
    s.start();
    return v;
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

  /** The page's address, e.g. {@code http://127.0.0.1:8642/}. */
  public String url() {
    String host = server.getAddress().getHostString();
    if (host.contains(":")) {
      host = "[" + host + "]";
    }
    return "http://" + host + ":" + port() + "/";
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

  private void page(HttpExchange x) throws IOException {
    if (!hostAllowed(x)) return;
    if (!x.getRequestURI().getPath().equals("/") && !x.getRequestURI().getPath().equals("/index.html")) {
      send(x, 404, "text/plain; charset=utf-8", "not found; the page is at /\n".getBytes(StandardCharsets.UTF_8));
      return;
    }
    send(x, 200, "text/html; charset=utf-8", page);
  }

  private void api(HttpExchange x) throws IOException {
    if (!hostAllowed(x)) return;
    byte[] body = JSON.writeValueAsBytes(state.stateJson());
    send(x, 200, "application/json", body);
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
