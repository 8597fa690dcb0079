package dev.runnel.connect.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.Test;

/** A log line written while the progress line shows starts on a line of its own (issue 14: lines were glued). */
class SharedTerminalTest {

  @Test
  void aLineWrittenWhileTheProgressLineShowsStartsBelowIt() {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    SharedTerminal err = SharedTerminal.around(new PrintStream(bytes, true, StandardCharsets.UTF_8));
    long[] now = {0};
    Progress p = new Progress(err, "records", 0, false, () -> now[0]);
    now[0] = 1_000_000_000L;
    p.update(100, () -> "");
    err.println("[kafka-producer-network-thread] WARN a client line"); // as slf4j-simple writes it
    now[0] = 2_000_000_000L;
    p.update(200, () -> "");
    p.finish(300, "");
    err.println("runnel: stopped");
    List<String> lines = List.of(bytes.toString(StandardCharsets.UTF_8).split("\n")); // a terminal line ends at \n; \r redraws it
    assertEquals("[kafka-producer-network-thread] WARN a client line", lines.get(1), "the log line on its own line: " + lines);
    assertTrue(lines.get(0).startsWith("\r100 records"), lines.get(0));
    assertTrue(lines.get(2).contains("300 records"), "the progress line drawn again below: " + lines);
    assertEquals("runnel: stopped", lines.get(3));
    assertEquals(4, lines.size(), "no blank lines: " + lines);
  }

  @Test
  void withoutTheSharedTerminalTheLineIsGlued() {
    // the failure this class prevents, shown on a plain stream
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    PrintStream plain = new PrintStream(bytes, true, StandardCharsets.UTF_8);
    long[] now = {1_000_000_000L};
    Progress p = new Progress(plain, "records", 0, false, () -> now[0]);
    p.update(100, () -> "");
    plain.println("WARN a client line");
    String first = bytes.toString(StandardCharsets.UTF_8).split("\n")[0];
    assertTrue(first.startsWith("\r100 records") && first.endsWith("WARN a client line"), first);
  }
}
