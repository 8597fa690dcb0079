package dev.runnel.connect.web;

import java.io.IOException;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.security.NoSuchAlgorithmException;

/**
 * The web server's bearer token: where it comes from, when one is required, and the check of a request's
 * {@code Authorization} header. The token is never printed, logged or put in a page or an error message.
 */
public final class WebAccess {

  /** The environment variable that may hold the token. */
  public static final String TOKEN_ENV = "RUNNEL_WEB_TOKEN";
  /** Shortest token accepted. */
  public static final int MIN_TOKEN_CHARS = 16;

  private final byte[] tokenDigest;
  /** The server's TLS context (docs/operations.md, "TLS"); null: plain HTTP. */
  private final javax.net.ssl.SSLContext tls;

  private WebAccess(byte[] tokenDigest) {
    this(tokenDigest, null);
  }

  private WebAccess(byte[] tokenDigest, javax.net.ssl.SSLContext tls) {
    this.tokenDigest = tokenDigest;
    this.tls = tls;
  }

  /** The same token, served over TLS with {@code context} (null: plain HTTP). */
  public WebAccess withTls(javax.net.ssl.SSLContext context) {
    return new WebAccess(tokenDigest, context);
  }

  /** The TLS context, or null for plain HTTP. */
  public javax.net.ssl.SSLContext tls() {
    return tls;
  }

  /** No token: every request is let through (only on a loopback address, see {@link #check}). */
  public static WebAccess open() {
    return new WebAccess(null);
  }

  /**
   * The token from the environment variable {@value #TOKEN_ENV}, else from {@code web.token_file}, else none.
   *
   * @param tokenFile the value of {@code web.token_file}; "" = none
   * @param envValue the value of {@value #TOKEN_ENV}, null when unset
   * @throws IllegalArgumentException naming the key or variable when the token cannot be read or is too short
   */
  public static WebAccess resolve(String tokenFile, String envValue) {
    String token;
    String from;
    if (envValue != null && !envValue.isEmpty()) {
      token = envValue.strip();
      from = "the environment variable " + TOKEN_ENV;
    } else if (tokenFile != null && !tokenFile.isBlank()) {
      try {
        token = Files.readString(Path.of(tokenFile), StandardCharsets.UTF_8).strip();
      } catch (IOException | RuntimeException e) {
        throw new IllegalArgumentException("web.token_file: " + tokenFile + " cannot be read (" + e.getClass().getSimpleName()
            + "); give a readable file that holds the token on one line", e);
      }
      from = "web.token_file (" + tokenFile + ")";
    } else {
      return open();
    }
    if (token.length() < MIN_TOKEN_CHARS || token.chars().anyMatch(c -> c <= 0x20 || c >= 0x7f)) {
      throw new IllegalArgumentException(from + ": the token must be at least " + MIN_TOKEN_CHARS + " printable ASCII"
          + " characters without spaces (it has " + token.length() + " characters); make one with e.g."
          + " `openssl rand -hex 32`");
    }
    return new WebAccess(digest(token.getBytes(StandardCharsets.US_ASCII)));
  }

  /** Whether a token is required. */
  public boolean hasToken() {
    return tokenDigest != null;
  }

  /**
   * Refuses to serve on an address other than a loopback one without a token.
   *
   * @throws IllegalArgumentException naming web.bind, the token's two sources and the fix
   */
  public void checkBind(String bind, InetSocketAddress address) {
    InetAddress a = address.getAddress();
    if (tokenDigest == null && a != null && !a.isLoopbackAddress()) {
      throw new IllegalArgumentException("web.bind: " + bind + " is not a loopback address, and no token is set: anyone who can"
          + " reach it could read the state and ask for forecasts. Set the environment variable " + TOKEN_ENV + " or"
          + " web.token_file to a secret of " + MIN_TOKEN_CHARS + " or more characters (requests then need"
          + " `Authorization: Bearer <token>`), or bind to 127.0.0.1");
    }
  }

  /**
   * Whether a request with this {@code Authorization} header may pass: always without a token; with one,
   * only {@code Bearer <token>}. Compared in constant time (SHA-256 digests of both, then
   * {@link MessageDigest#isEqual}, which does not stop at the first difference; common practice), so
   * neither the token's content nor its length can be learned from response times.
   */
  public boolean allows(String authorizationHeader) {
    if (tokenDigest == null) {
      return true;
    }
    if (authorizationHeader == null || !authorizationHeader.regionMatches(true, 0, "Bearer ", 0, 7)) {
      return false;
    }
    byte[] given = authorizationHeader.substring(7).strip().getBytes(StandardCharsets.UTF_8);
    return MessageDigest.isEqual(tokenDigest, digest(given));
  }

  private static byte[] digest(byte[] b) {
    try {
      return MessageDigest.getInstance("SHA-256").digest(b);
    } catch (NoSuchAlgorithmException e) {
      throw new IllegalStateException("SHA-256 is missing from this JDK", e);
    }
  }

  /** Never the token. */
  @Override
  public String toString() {
    return (tokenDigest == null ? "no token" : "a bearer token (not shown)") + (tls == null ? "" : ", TLS");
  }
}
