package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.net.Socket;
import java.net.SocketTimeoutException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * The web view's server against hostile clients: half-open connections do not starve it and are
 * closed, only Host names of this machine (or listed ones) are answered, and a bind address that
 * does not resolve names web.bind. No broker: the state is served without following any topic.
 */
class WebViewHardeningTest {

  private static LiveState state() {
    return new LiveState("hardening", "127.0.0.1:9", Map.of(), null);
  }

  /** Sends raw bytes and reads until the server closes the connection (HTTP/1.0 style: Connection: close). */
  private static String exchange(int port, String request, int timeoutMs) throws IOException {
    try (Socket s = new Socket("127.0.0.1", port)) {
      s.setSoTimeout(timeoutMs);
      s.getOutputStream().write(request.getBytes(StandardCharsets.US_ASCII));
      s.getOutputStream().flush();
      return readToEnd(s.getInputStream());
    }
  }

  private static String readToEnd(InputStream in) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    byte[] buf = new byte[8192];
    for (int n; (n = in.read(buf)) >= 0; ) {
      b.write(buf, 0, n);
    }
    return b.toString(StandardCharsets.UTF_8);
  }

  private static String get(int port, String path, String host) throws IOException {
    return exchange(port, "GET " + path + " HTTP/1.1\r\nHost: " + host + "\r\nConnection: close\r\n\r\n", 30_000);
  }

  @Test
  void onlyHostNamesOfThisMachineOrListedOnesAreAnswered() throws IOException {
    try (WebView web = WebView.start("127.0.0.1", 0, false, List.of("runnel.example.internal"), state())) {
      int port = web.port();
      assertTrue(get(port, "/api/state", "127.0.0.1:" + port).startsWith("HTTP/1.1 200"));
      assertTrue(get(port, "/api/state", "localhost:" + port).startsWith("HTTP/1.1 200"));
      assertTrue(get(port, "/", "LOCALHOST").startsWith("HTTP/1.1 200"));
      assertTrue(get(port, "/api/state", "[::1]:" + port).startsWith("HTTP/1.1 200"));
      assertTrue(get(port, "/api/state", "Runnel.Example.Internal:" + port).startsWith("HTTP/1.1 200"), "a listed name");
      // a page of another site whose DNS name now points here (DNS rebinding) sends its own name
      String rebound = get(port, "/api/state", "attacker.example:" + port);
      assertTrue(rebound.startsWith("HTTP/1.1 403"), rebound);
      assertTrue(rebound.contains("web.allowed_hosts") && !rebound.contains("\"pipeline\""), rebound);
      assertTrue(get(port, "/", "attacker.example").startsWith("HTTP/1.1 403"));
      String noHost = exchange(port, "GET /api/state HTTP/1.0\r\n\r\n", 30_000);
      assertTrue(noHost.startsWith("HTTP/1.1 403"), noHost);
    }
  }

  @Test
  void halfOpenConnectionsNeitherStarveTheServerNorStayOpen() throws IOException {
    try (WebView web = WebView.start("127.0.0.1", 0, false, state())) {
      int port = web.port();
      List<Socket> stuck = new ArrayList<>();
      try {
        // half-open requests, each sends part of a request and then nothing (two were enough to block the old server)
        for (int i = 0; i < WebView.THREADS / 2; i++) {
          Socket s = new Socket("127.0.0.1", port);
          s.getOutputStream().write(("GET /api/state HTTP/1.1\r\nHost: 127.0.0.1\r\n").getBytes(StandardCharsets.US_ASCII));
          s.getOutputStream().flush();
          stuck.add(s);
        }
        // a normal request is still answered (before the fix it waited for good: every thread was blocked reading)
        String r = get(port, "/api/state", "127.0.0.1");
        assertTrue(r.startsWith("HTTP/1.1 200"), r);
        // and the server closes the half-open connections itself (well within 3 times its request limit)
        for (Socket s : stuck) {
          s.setSoTimeout((int) (3 * WebView.MAX_REQUEST_SECONDS * 1000));
          try {
            readToEnd(s.getInputStream());
          } catch (SocketTimeoutException e) {
            throw new AssertionError("a half-open connection was still open after " + 3 * WebView.MAX_REQUEST_SECONDS + " s", e);
          } catch (IOException reset) {
            // closed by the server with a reset: also closed
          }
        }
      } finally {
        for (Socket s : stuck) {
          s.close();
        }
      }
    }
  }

  @Test
  void aBindAddressThatDoesNotResolveNamesTheKey() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> WebView.start("no-such-host.invalid", 0, false, state()));
    assertTrue(e.getMessage().startsWith("web.bind: no-such-host.invalid does not resolve"), e.getMessage());
    IOException notHere = assertThrows(IOException.class, () -> WebView.start("192.0.2.1", 0, false, state()));
    assertTrue(notHere.getMessage().startsWith("web.bind: 192.0.2.1 (192.0.2.1) is not an address of this machine"), notHere.getMessage());
    assertEquals("::1", WebView.hostName("[::1]:8642"));
  }
}
