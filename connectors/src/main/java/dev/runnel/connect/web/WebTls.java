package dev.runnel.connect.web;

import java.io.File;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.GeneralSecurityException;
import java.security.KeyStore;
import java.util.Arrays;
import javax.net.ssl.KeyManagerFactory;
import javax.net.ssl.SSLContext;

/**
 * TLS for the web server through the JDK (docs/operations.md, "TLS"): a key store (PKCS12 or JKS, told
 * apart by the JDK) named by {@code web.key_store_file}, its password from the environment variable
 * {@value #PASSWORD_ENV}, else from the file {@code web.key_store_password_file}. The password is never
 * printed, logged or put in a message.
 */
public final class WebTls {

  /** The environment variable that may hold the key store's password. */
  public static final String PASSWORD_ENV = "RUNNEL_WEB_KEY_STORE_PASSWORD";

  private WebTls() { }

  /**
   * The server's TLS context, or null when no key store is configured.
   *
   * @param keyStoreFile {@code web.key_store_file}; "" = no TLS
   * @param passwordFile {@code web.key_store_password_file}; "" = none
   * @param envPassword the value of {@value #PASSWORD_ENV}, null when unset
   * @throws IllegalArgumentException naming the key when the password is missing or unreadable, or the
   *     key store cannot be read with it or holds no key
   */
  public static SSLContext context(String keyStoreFile, String passwordFile, String envPassword) {
    if (keyStoreFile == null || keyStoreFile.isBlank()) {
      if (passwordFile != null && !passwordFile.isBlank()) {
        throw new IllegalArgumentException("web.key_store_password_file is set but web.key_store_file is not; name the key"
            + " store, or leave the password file out");
      }
      return null;
    }
    char[] password;
    if (envPassword != null && !envPassword.isEmpty()) {
      password = envPassword.toCharArray();
    } else if (passwordFile != null && !passwordFile.isBlank()) {
      try {
        password = Files.readString(Path.of(passwordFile), StandardCharsets.UTF_8).strip().toCharArray();
      } catch (IOException | RuntimeException e) {
        throw new IllegalArgumentException("web.key_store_password_file: " + passwordFile + " cannot be read ("
            + e.getClass().getSimpleName() + "); give a readable file that holds the password on one line");
      }
    } else {
      throw new IllegalArgumentException("web.key_store_file: " + keyStoreFile + " is set but no password is: set the"
          + " environment variable " + PASSWORD_ENV + " or web.key_store_password_file");
    }
    try {
      KeyStore ks = KeyStore.getInstance(new File(keyStoreFile), password);
      boolean hasKey = false;
      for (String alias : java.util.Collections.list(ks.aliases())) {
        hasKey |= ks.isKeyEntry(alias);
      }
      if (!hasKey) {
        throw new IllegalArgumentException("web.key_store_file: " + keyStoreFile + " holds no private key; give a key store"
            + " with the server's key and certificate (e.g. made by keytool -genkeypair)");
      }
      KeyManagerFactory kmf = KeyManagerFactory.getInstance(KeyManagerFactory.getDefaultAlgorithm());
      kmf.init(ks, password);
      SSLContext ctx = SSLContext.getInstance("TLS");
      ctx.init(kmf.getKeyManagers(), null, null);
      return ctx;
    } catch (IOException | GeneralSecurityException e) {
      // the JDK's message names no password; still, say only the kind of failure
      throw new IllegalArgumentException("web.key_store_file: " + keyStoreFile + " cannot be opened with the password given ("
          + e.getClass().getSimpleName() + "); check the file (PKCS12 or JKS) and " + PASSWORD_ENV
          + " or web.key_store_password_file");
    } finally {
      Arrays.fill(password, '\0');
    }
  }
}
