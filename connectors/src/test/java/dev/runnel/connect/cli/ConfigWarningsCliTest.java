package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import picocli.CommandLine;

/** {@code replay} and {@code backtest} print the configuration's warnings once, at start, on stderr. */
class ConfigWarningsCliTest {

  private static final String NO_TIMES = """
      name: w
      input:
        fields: {hub: text, sessions: number}
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: cyclic, cycle: hour_of_day}
      """;

  private static final String WITH_TIMES = """
      name: v
      input:
        fields: {hub: text, sessions: number, at: time}
        event_time: {field: at}
        time_zone: Europe/Amsterdam
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: cyclic, cycle: hour_of_day}
      """;

  /** Runs a verb; returns {exit code, stderr (System.err and picocli's), stdout}. */
  private static String[] run(String... args) {
    PrintStream oldOut = System.out;
    PrintStream oldErr = System.err;
    ByteArrayOutputStream out = new ByteArrayOutputStream();
    ByteArrayOutputStream err = new ByteArrayOutputStream();
    StringWriter picoErr = new StringWriter();
    int code;
    try {
      System.setOut(new PrintStream(out, true, StandardCharsets.UTF_8));
      System.setErr(new PrintStream(err, true, StandardCharsets.UTF_8));
      CommandLine cl = Main.commandLine();
      cl.setErr(new PrintWriter(picoErr, true));
      code = cl.execute(args);
    } finally {
      System.setOut(oldOut);
      System.setErr(oldErr);
    }
    return new String[] {String.valueOf(code), err.toString(StandardCharsets.UTF_8) + picoErr, out.toString(StandardCharsets.UTF_8)};
  }

  private static List<String> warnings(String stderr) {
    return Arrays.stream(stderr.split("\n")).filter(l -> l.startsWith("runnel: warning: ")).toList();
  }

  private static Path source(Path dir) throws Exception {
    Path f = dir.resolve("in.jsonl");
    Files.writeString(f, """
        {"hub":"A","sessions":3,"at":"2026-03-01T08:00:00+01:00"}
        {"hub":"B","sessions":5,"at":"2026-03-01T09:00:00+01:00"}
        {"hub":"A","sessions":4,"at":"2026-03-01T10:00:00+01:00"}
        """);
    return f;
  }

  @Test
  void replay_printsEachWarningOnce_namingFileAndKey(@TempDir Path dir) throws Exception {
    Path cfg = Files.writeString(dir.resolve("w.yaml"), NO_TIMES);
    String[] r = run("replay", "--config", cfg.toString(), "--source", source(dir).toString(),
        "--out", dir.resolve("out").toString(), "--quiet");
    assertEquals("0", r[0], r[1]);
    List<String> w = warnings(r[1]);
    assertEquals(2, w.size(), r[1]);
    assertTrue(w.get(0).startsWith("runnel: warning: " + cfg + ": input.event_time: not given"), w.get(0));
    assertTrue(w.get(1).startsWith("runnel: warning: " + cfg + ": input.time_zone: not given"), w.get(1));
  }

  @Test
  void backtest_printsTheWarningsOfEachConfiguration_andNoneForACompleteOne(@TempDir Path dir) throws Exception {
    Path a = Files.writeString(dir.resolve("a.yaml"), NO_TIMES);
    Path b = Files.writeString(dir.resolve("b.yaml"), WITH_TIMES);
    String[] r = run("backtest", "--source", source(dir).toString(), "--config", a.toString(), "--config", b.toString(),
        "--out", dir.resolve("bt").toString(), "--quiet", "--threads", "1");
    assertEquals("0", r[0], r[1]);
    List<String> w = warnings(r[1]);
    assertEquals(2, w.size(), r[1]);
    assertTrue(w.stream().allMatch(l -> l.startsWith("runnel: warning: " + a + ": ")), w.toString());
  }
}
