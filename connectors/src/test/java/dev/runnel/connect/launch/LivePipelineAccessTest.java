package dev.runnel.connect.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import org.junit.jupiter.api.Test;

/**
 * {@code run} refuses, before it starts anything, a web server open to other machines without a token, and a
 * forecast key field that is no text field; each error names the key and the fix. No broker: the cluster named
 * is never contacted.
 */
class LivePipelineAccessTest {

  private static final String TOKEN = "a-token-of-enough-length-42";

  private static LivePipeline.Options options() {
    return new LivePipeline.Options("127.0.0.1:9", null, -1, "0", 0, true, false, "test");
  }

  @Test
  void anOpenAddressWithoutATokenIsRefusedBeforeAnythingStarts() throws Exception {
    ByteArrayOutputStream said = new ByteArrayOutputStream();
    PrintStream err = new PrintStream(said, true, StandardCharsets.UTF_8);
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> LivePipeline.connect(
        ServiceOnKafkaTest.config("open", "127.0.0.1:9", "  bind: 0.0.0.0\n"), options(), err, null));
    assertTrue(e.getMessage().startsWith("web.bind: 0.0.0.0 is not a loopback address, and no token is set"), e.getMessage());
    assertTrue(e.getMessage().contains("RUNNEL_WEB_TOKEN") && e.getMessage().contains("web.token_file"), e.getMessage());
    assertEquals("", said.toString(StandardCharsets.UTF_8), "nothing started, nothing said");
    // with the token from the environment it is accepted, and the token is not printed
    try (LivePipeline p = LivePipeline.connect(ServiceOnKafkaTest.config("open", "127.0.0.1:9", "  bind: 0.0.0.0\n"), options(), err,
        TOKEN)) {
      assertEquals("127.0.0.1:9", p.bootstrapServers());
    }
    assertFalse(said.toString(StandardCharsets.UTF_8).contains(TOKEN));
  }

  @Test
  void aForecastKeyFieldThatIsNoTextFieldNamesTheKey() throws Exception {
    PrintStream err = new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8);
    IllegalArgumentException number = assertThrows(IllegalArgumentException.class, () -> LivePipeline.connect(
        ServiceOnKafkaTest.config("key", "127.0.0.1:9", "  forecast_key_field: temperature_c\n"), options(), err, null));
    assertTrue(number.getMessage().startsWith("web.forecast_key_field"), number.getMessage());
  }
}
