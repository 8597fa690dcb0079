package dev.runnel.connect.cli;

import dev.runnel.connect.drift.DriftTable;
import java.io.PrintStream;
import java.util.Map;

/** Lets tests in other packages call the drift verb's reader. */
public final class DriftCommandAccess {
  private DriftCommandAccess() { }

  /** {@link DriftCommand#print} without client properties and without following. */
  public static int print(String servers, String topic, DriftTable table, PrintStream out) {
    return DriftCommand.print(servers, Map.of(), topic, table, false, out);
  }

  /** {@link DriftCommand#printFile}: a replay's {@code coefficients.jsonl}. */
  public static int printFile(java.nio.file.Path file, DriftTable table, PrintStream out) throws java.io.IOException {
    return DriftCommand.printFile(file, table, out);
  }
}
