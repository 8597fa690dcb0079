package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.net.Socket;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.KeyStore;
import java.time.Duration;
import java.util.List;
import java.util.Map;
import javax.net.ssl.SSLContext;
import javax.net.ssl.TrustManagerFactory;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * TLS through the JDK when a key store is configured: a client that trusts the server's certificate
 * (made in the test by the JDK's keytool) gets its answers over HTTPS, the token still applies, a
 * plain-HTTP request gets no answer, and the password never appears in a message.
 */
class WebTlsTest {

  private static final String PASSWORD = "ks-pass-0123456789";
  private static final String TOKEN = "s3cret-token-0123456789abcdef";

  @TempDir Path dir;

  /** A PKCS12 key store with a self-signed key pair for 127.0.0.1, made by the JDK's keytool. */
  private Path keyStore() throws Exception {
    Path ks = dir.resolve("server.p12");
    Path keytool = Path.of(System.getProperty("java.home"), "bin", "keytool");
    Process p = new ProcessBuilder(keytool.toString(), "-genkeypair", "-alias", "runnel", "-keyalg", "RSA", "-keysize", "2048",
        "-validity", "2", "-dname", "CN=localhost", "-ext", "SAN=ip:127.0.0.1,dns:localhost",
        "-storetype", "PKCS12", "-keystore", ks.toString(), "-storepass", PASSWORD, "-keypass", PASSWORD)
        .redirectErrorStream(true).start();
    String out = new String(p.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    assertEquals(0, p.waitFor(), out);
    return ks;
  }

  /** A client context that trusts exactly the key store's certificate. */
  private static SSLContext trusting(Path ks) throws Exception {
    KeyStore store = KeyStore.getInstance(ks.toFile(), PASSWORD.toCharArray());
    TrustManagerFactory tmf = TrustManagerFactory.getInstance(TrustManagerFactory.getDefaultAlgorithm());
    tmf.init(store);
    SSLContext c = SSLContext.getInstance("TLS");
    c.init(null, tmf.getTrustManagers(), null);
    return c;
  }

  @Test
  void withAKeyStoreEveryEndpointIsServedOverTls() throws Exception {
    Path ks = keyStore();
    Path pwFile = dir.resolve("pw");
    Files.writeString(pwFile, PASSWORD + "\n");
    SSLContext server = WebTls.context(ks.toString(), pwFile.toString(), null);
    WebAccess access = WebAccess.resolve("", TOKEN).withTls(server);
    LiveState state = new LiveState("tls", "127.0.0.1:9", Map.of(), null);
    WebView v = WebView.start("127.0.0.1", 0, false, List.of(), state, access, null, null);
    try {
      assertTrue(v.url().startsWith("https://127.0.0.1:"), v.url());
      HttpClient client = HttpClient.newBuilder().sslContext(trusting(ks)).connectTimeout(Duration.ofSeconds(30)).build();
      HttpResponse<String> page = client.send(HttpRequest.newBuilder(URI.create(v.url())).build(), HttpResponse.BodyHandlers.ofString());
      assertEquals(200, page.statusCode());
      HttpResponse<String> noToken = client.send(HttpRequest.newBuilder(URI.create(v.url() + "api/state")).build(),
          HttpResponse.BodyHandlers.ofString());
      assertEquals(401, noToken.statusCode(), "the token still applies over TLS");
      HttpResponse<String> withToken = client.send(HttpRequest.newBuilder(URI.create(v.url() + "api/state"))
          .header("Authorization", "Bearer " + TOKEN).build(), HttpResponse.BodyHandlers.ofString());
      assertEquals(200, withToken.statusCode());
      assertTrue(withToken.body().contains("\"pipeline\""), withToken.body());

      // plain HTTP to the TLS port: no HTTP answer
      String plain;
      try (Socket s = new Socket("127.0.0.1", v.port())) {
        s.setSoTimeout(30_000);
        s.getOutputStream().write("GET /health HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n".getBytes(StandardCharsets.US_ASCII));
        InputStream in = s.getInputStream();
        ByteArrayOutputStream b = new ByteArrayOutputStream();
        try {
          in.transferTo(b);
        } catch (IOException reset) {
          // the server closed the connection: no answer either
        }
        plain = b.toString(StandardCharsets.ISO_8859_1);
      }
      assertFalse(plain.startsWith("HTTP/1.1 200"), plain);
    } finally {
      v.close();
    }
  }

  @Test
  void aWrongOrMissingPasswordNamesTheKeysAndNeverThePassword() throws Exception {
    Path ks = keyStore();
    IllegalArgumentException wrong = assertThrows(IllegalArgumentException.class,
        () -> WebTls.context(ks.toString(), "", "not-the-" + PASSWORD));
    assertTrue(wrong.getMessage().startsWith("web.key_store_file: " + ks), wrong.getMessage());
    assertFalse(wrong.getMessage().contains(PASSWORD), "the password is never in a message");
    IllegalArgumentException none = assertThrows(IllegalArgumentException.class, () -> WebTls.context(ks.toString(), "", null));
    assertTrue(none.getMessage().contains(WebTls.PASSWORD_ENV) && none.getMessage().contains("web.key_store_password_file"),
        none.getMessage());
    assertNull(WebTls.context("", "", PASSWORD), "no key store: plain HTTP");
    // the environment's password wins over the file's
    Path wrongFile = dir.resolve("wrong");
    Files.writeString(wrongFile, "wrong-password-here");
    assertTrue(WebTls.context(ks.toString(), wrongFile.toString(), PASSWORD) != null);
  }
}
