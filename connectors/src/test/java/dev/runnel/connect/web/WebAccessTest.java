package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.net.Socket;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.concurrent.atomic.AtomicInteger;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Access to the web server: the bearer token (none, a wrong one, the right one), where it comes from, that it
 * never appears in a message, that an address other than a loopback one is refused without it, and the bounds
 * of a forecast request (body size, records per request, method). No broker: the service is a stand-in whose
 * runner never starts.
 */
class WebAccessTest {

  private static final String TOKEN = "s3cret-token-0123456789abcdef";

  private static LiveState state() {
    return new LiveState("access", "127.0.0.1:9", Map.of(), null);
  }

  /** A service whose every forecast answers "{}" and counts. */
  private static final class StandIn implements Service {
    final ExactlyOnceRunner runner = new ExactlyOnceRunner(RunnerSettings.of("access", "access.in", "127.0.0.1:9"), tp -> null);
    final AtomicInteger asked = new AtomicInteger();

    @Override public ExactlyOnceRunner runner() { return runner; }
    @Override public Map<String, Long> rejectsByReason() { return Map.of("malformed_json", 3L); }
    @Override public Map<Integer, PartitionStats> partitionStats() { return Map.of(0, new PartitionStats(1.5, 0.75, 2)); }
    @Override public Answer forecast(byte[] record, long arrivalMillis) {
      asked.incrementAndGet();
      return new Answer(Outcome.FORECAST, 0, null, "", "{}".getBytes(StandardCharsets.UTF_8));
    }
  }

  private static String exchange(int port, String request) throws IOException {
    try (Socket s = new Socket("127.0.0.1", port)) {
      s.setSoTimeout(30_000);
      s.getOutputStream().write(request.getBytes(StandardCharsets.UTF_8));
      s.getOutputStream().flush();
      InputStream in = s.getInputStream();
      ByteArrayOutputStream b = new ByteArrayOutputStream();
      in.transferTo(b);
      return b.toString(StandardCharsets.UTF_8);
    }
  }

  private static String get(int port, String path, String authorization) throws IOException {
    return exchange(port, "GET " + path + " HTTP/1.1\r\nHost: elsewhere.example\r\nConnection: close\r\n"
        + (authorization == null ? "" : "Authorization: " + authorization + "\r\n") + "\r\n");
  }

  private static String post(int port, String path, String body) throws IOException {
    byte[] b = body.getBytes(StandardCharsets.UTF_8);
    return exchange(port, "POST " + path + " HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\nAuthorization: Bearer " + TOKEN
        + "\r\nContent-Length: " + b.length + "\r\n\r\n" + body);
  }

  private static int status(String response) {
    return Integer.parseInt(response.substring(9, 12));
  }

  @Test
  void everyEndpointButHealthNeedsTheRightToken() throws Exception {
    StandIn service = new StandIn();
    ServiceMetrics metrics = new ServiceMetrics("access", service);
    try (WebView web = WebView.start("127.0.0.1", 0, false, List.of(), state(), WebAccess.resolve("", TOKEN), service, metrics)) {
      int port = web.port();
      assertEquals(200, status(get(port, "/health", null)));
      for (String path : List.of("/api/state", "/metrics", "/ready", "/forecast")) {
        String none = get(port, path, null);
        assertEquals(401, status(none), path + ": " + none);
        assertTrue(none.toLowerCase(java.util.Locale.ROOT).contains("www-authenticate: bearer"), none);
        assertFalse(none.contains(TOKEN), "the token is never in an answer");
        assertEquals(401, status(get(port, path, "Bearer " + TOKEN.substring(1))), path + " with a wrong token");
        assertEquals(401, status(get(port, path, "Bearer " + TOKEN + "x")), path + " with a longer token");
        assertEquals(401, status(get(port, path, TOKEN)), path + " without the scheme");
      }
      // the right token: answered whatever the Host header says (the token replaces the Host check)
      assertEquals(200, status(get(port, "/api/state", "Bearer " + TOKEN)));
      assertEquals(200, status(get(port, "/api/state", "bearer " + TOKEN)), "the scheme is case-insensitive (RFC 7235)");
      String scrape = get(port, "/metrics", "Bearer " + TOKEN);
      assertEquals(200, status(scrape), scrape);
      assertTrue(scrape.contains("runnel_rejects_total{pipeline=\"access\",reason=\"malformed_json\"} 3.0"), scrape);
      assertTrue(scrape.contains("runnel_noise_sd{partition=\"0\",pipeline=\"access\"} 1.5"), scrape);
      assertTrue(scrape.contains("runnel_active_alarms{partition=\"0\",pipeline=\"access\"} 2.0"), scrape);
      String notReady = get(port, "/ready", "Bearer " + TOKEN);
      assertEquals(503, status(notReady), notReady);
      assertTrue(notReady.contains("not ready: the runner has not started"), notReady);
      assertEquals(405, status(get(port, "/forecast", "Bearer " + TOKEN)));
    }
  }

  @Test
  void forecastRequestsAreBounded() throws Exception {
    StandIn service = new StandIn();
    try (WebView web = WebView.start("127.0.0.1", 0, false, List.of(), state(), WebAccess.resolve("", TOKEN), service,
        new ServiceMetrics("access", service))) {
      int port = web.port();
      assertEquals(200, status(post(port, "/forecast", "{\"a\":1}")));
      String many = "[" + String.join(",", java.util.Collections.nCopies(WebView.MAX_FORECAST_RECORDS, "{\"a\":1}")) + "]";
      assertEquals(200, status(post(port, "/forecast", many)));
      assertEquals(1 + WebView.MAX_FORECAST_RECORDS, service.asked.get());
      String tooMany = "[" + String.join(",", java.util.Collections.nCopies(WebView.MAX_FORECAST_RECORDS + 1, "{}")) + "]";
      assertEquals(413, status(post(port, "/forecast", tooMany)));
      String big = "{\"a\":\"" + "x".repeat(WebView.MAX_FORECAST_BODY_BYTES) + "\"}";
      assertEquals(413, status(post(port, "/forecast", big)));
      assertEquals(400, status(post(port, "/forecast", "[{\"a\":1}")), "a broken array");
      assertEquals(1 + WebView.MAX_FORECAST_RECORDS, service.asked.get(), "refused requests reached no model");
    }
  }

  @Test
  void anAddressOpenToOthersNeedsAToken() throws Exception {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> WebView.start("0.0.0.0", 0, false, List.of(), state(), WebAccess.open(), null, null));
    assertTrue(e.getMessage().startsWith("web.bind: 0.0.0.0 is not a loopback address, and no token is set"), e.getMessage());
    assertTrue(e.getMessage().contains(WebAccess.TOKEN_ENV) && e.getMessage().contains("web.token_file")
        && e.getMessage().contains("bind to 127.0.0.1"), e.getMessage());
    try (WebView web = WebView.start("0.0.0.0", 0, false, List.of(), state(), WebAccess.resolve("", TOKEN), null, null)) {
      assertEquals(401, status(get(web.port(), "/api/state", null)));
    }
    // loopback without a token: open, as before
    try (WebView web = WebView.start("127.0.0.1", 0, false, List.of(), state(), WebAccess.open(), null, null)) {
      assertEquals(200, status(exchange(web.port(), "GET /api/state HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n")));
    }
  }

  @Test
  void theTokenComesFromTheEnvironmentElseTheFile(@TempDir Path dir) throws Exception {
    Path f = dir.resolve("token");
    Files.writeString(f, TOKEN + "\n");
    WebAccess fromFile = WebAccess.resolve(f.toString(), null);
    assertTrue(fromFile.allows("Bearer " + TOKEN));
    WebAccess fromEnv = WebAccess.resolve(f.toString(), "another-token-0123456789");
    assertTrue(fromEnv.allows("Bearer another-token-0123456789"));
    assertFalse(fromEnv.allows("Bearer " + TOKEN), "the environment wins over the file");
    assertFalse(WebAccess.open().hasToken());
    assertTrue(WebAccess.open().allows(null));
    assertFalse(fromFile.toString().contains(TOKEN));
    IllegalArgumentException missing = assertThrows(IllegalArgumentException.class,
        () -> WebAccess.resolve(dir.resolve("nope").toString(), null));
    assertTrue(missing.getMessage().startsWith("web.token_file: " + dir.resolve("nope") + " cannot be read"), missing.getMessage());
    Files.writeString(f, "short\n");
    IllegalArgumentException shortOne = assertThrows(IllegalArgumentException.class, () -> WebAccess.resolve(f.toString(), null));
    assertTrue(shortOne.getMessage().contains("at least 16"), shortOne.getMessage());
    assertFalse(shortOne.getMessage().contains("short"), "not even a bad token is printed: " + shortOne.getMessage());
  }
}
