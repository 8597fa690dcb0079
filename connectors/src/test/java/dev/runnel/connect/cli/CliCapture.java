package dev.runnel.connect.cli;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.charset.StandardCharsets;
import picocli.CommandLine;

/** Runs one verb of the real command line with its output captured (tests are quiet). */
final class CliCapture {

  private CliCapture() {
  }

  /**
   * @param args the verb and its options. Not modified.
   * @return exit code, error text, and standard output followed by picocli's own output (help)
   */
  static String[] run(String... args) {
    StringWriter err = new StringWriter();
    StringWriter help = new StringWriter();
    PrintStream oldOut = System.out;
    PrintStream oldErr = System.err;
    ByteArrayOutputStream out = new ByteArrayOutputStream();
    int code;
    try {
      System.setOut(new PrintStream(out, true, StandardCharsets.UTF_8));
      System.setErr(new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8));
      // picocli's default execution strategy keeps the System streams it was made with and replaces
      // the writers below if they differ at execution time: make the command line after swapping them
      CommandLine cl = Main.commandLine();
      cl.setErr(new PrintWriter(err, true));
      cl.setOut(new PrintWriter(help, true));
      code = cl.execute(args);
    } finally {
      System.setOut(oldOut);
      System.setErr(oldErr);
    }
    return new String[] {String.valueOf(code), err.toString(), out.toString(StandardCharsets.UTF_8) + help};
  }
}
