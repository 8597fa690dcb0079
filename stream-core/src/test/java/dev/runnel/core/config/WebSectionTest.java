package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.junit.jupiter.params.provider.ValueSource;

/** The {@code web} section: {@code bind} must be an address or a host name, {@code allowed_hosts} a list of them. */
class WebSectionTest {

  private static String with(String webLines) {
    try (InputStream in = WebSectionTest.class.getResourceAsStream("/config/quillmarsh.yaml")) {
      String b = new String(in.readAllBytes(), StandardCharsets.UTF_8);
      assertTrue(b.contains("  bind: 127.0.0.1\n"), "the example has web.bind");
      return b.replace("  bind: 127.0.0.1\n", webLines);
    } catch (IOException e) {
      throw new AssertionError(e);
    }
  }

  @ParameterizedTest
  @CsvSource(delimiter = '|', textBlock = """
      http://127.0.0.1   | web.bind: "http://127.0.0.1" is not allowed; use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name
      127.0.0.1:8642     | web.bind: "127.0.0.1:8642" is not allowed; use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name
      300.1.2.3          | web.bind: "300.1.2.3" is not allowed; use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name
      'local host'       | web.bind: "local host" is not allowed; use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name
      '""'               | web.bind: "" is not allowed; use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name
      """)
  void aBindThatIsNoAddressNamesTheKey(String bind, String message) {
    ConfigException e = assertThrows(ConfigException.class, () -> ConfigLoader.parse(with("  bind: " + bind + "\n"), "q.yaml"));
    assertEquals(message, e.getMessage());
  }

  @ParameterizedTest
  @ValueSource(strings = {"127.0.0.1", "0.0.0.0", "'::1'", "'::'", "localhost", "runnel-1.example.internal"})
  void addressesAndHostNamesAreAccepted(String bind) {
    PipelineConfig c = ConfigLoader.parse(with("  bind: " + bind + "\n"), "q.yaml");
    assertEquals(bind.replace("'", ""), c.web().bind());
  }

  @Test
  void allowedHostsAreReadLowerCaseAndChecked() {
    PipelineConfig c = ConfigLoader.parse(with("  bind: 0.0.0.0\n  allowed_hosts: [Runnel.Example.Internal, 10.0.0.5, '[fd00::1]']\n"), "q.yaml");
    assertEquals(List.of("runnel.example.internal", "10.0.0.5", "fd00::1"), c.web().allowedHosts());
    assertEquals(List.of(), ConfigLoader.parse(with("  bind: 127.0.0.1\n"), "q.yaml").web().allowedHosts());
    ConfigException e = assertThrows(ConfigException.class,
        () -> ConfigLoader.parse(with("  bind: 0.0.0.0\n  allowed_hosts: [ok.example, 'evil.example/x']\n"), "q.yaml"));
    assertEquals("web.allowed_hosts[1]: \"evil.example/x\" is not allowed; use a list of host names or addresses the page is opened by,"
        + " e.g. [runnel.example.internal, 10.0.0.5]", e.getMessage());
  }
}
