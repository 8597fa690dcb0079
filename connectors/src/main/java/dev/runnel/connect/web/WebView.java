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
import java.nio.charset.StandardCharsets;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;

/**
 * The live web view: the JDK's HTTP server with two routes, {@code /} (one static HTML page with
 * inline CSS and JavaScript that draws SVG charts) and {@code /api/state} (the JSON document of
 * {@link LiveState#stateJson()}). Read only; bound to 127.0.0.1 unless configured otherwise.
 */
public final class WebView implements AutoCloseable {

  /** The page, shipped as a resource. */
  public static final String PAGE_RESOURCE = "/dev/runnel/connect/web/index.html";

  private static final ObjectMapper JSON = new ObjectMapper();

  private final HttpServer server;
  private final ExecutorService pool;
  private final LiveState state;
  private final byte[] page;

  private WebView(HttpServer server, LiveState state) {
    this.server = server;
    this.state = state;
    this.page = loadPage();
    this.pool = Executors.newFixedThreadPool(2, r -> {
      Thread t = new Thread(r, "runnel-web");
      t.setDaemon(true);
      return t;
    });
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
    HttpServer s;
    try {
      s = HttpServer.create(new InetSocketAddress(bind, port), 16);
    } catch (BindException e) {
      if (!fallBackToFreePort || port == 0) {
        throw new BindException("web.port: " + bind + ":" + port + " is taken (" + e.getMessage()
            + "); choose another port, or 0 for any free port");
      }
      s = HttpServer.create(new InetSocketAddress(bind, 0), 16);
    }
    WebView v = new WebView(s, state);
    s.start();
    return v;
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

  private void page(HttpExchange x) throws IOException {
    if (!x.getRequestURI().getPath().equals("/") && !x.getRequestURI().getPath().equals("/index.html")) {
      send(x, 404, "text/plain; charset=utf-8", "not found; the page is at /\n".getBytes(StandardCharsets.UTF_8));
      return;
    }
    send(x, 200, "text/html; charset=utf-8", page);
  }

  private void api(HttpExchange x) throws IOException {
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
