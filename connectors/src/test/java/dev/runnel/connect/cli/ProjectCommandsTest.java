package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

/**
 * The README's quick start, .ci/run and the command line agree: exactly two commands under
 * "Quick start", the second of which is the test command that .ci/run runs; every verb answers
 * --help.
 */
class ProjectCommandsTest {

  static List<String> quickStartCommands() throws Exception {
    List<String> lines = Files.readAllLines(Path.of("..", "README.md"));
    List<String> cmds = new ArrayList<>();
    boolean inSection = false;
    boolean inBlock = false;
    for (String l : lines) {
      if (l.matches("^#+ .*[Qq]uick[ -]?[Ss]tart.*")) {
        inSection = true;
        continue;
      }
      if (inSection && !inBlock && l.startsWith("#")) {
        break;
      }
      if (inSection && l.startsWith("```")) {
        if (inBlock) {
          break;
        }
        inBlock = true;
        continue;
      }
      if (inBlock && !l.isBlank() && !l.trim().startsWith("#")) {
        cmds.add(l.trim());
      }
    }
    return cmds;
  }

  @Test
  void readmeHasTwoCommandsAndCiRunsTheTestOne() throws Exception {
    List<String> cmds = quickStartCommands();
    assertEquals(2, cmds.size(), "two quick-start commands: " + cmds);
    assertTrue(cmds.get(0).startsWith("./runnel "), "the first runs the main job: " + cmds.get(0));
    String ci = Files.readString(Path.of("..", ".ci", "run"));
    List<String> ciCommands = ci.lines().map(String::trim).filter(l -> l.equals(cmds.get(1))).toList();
    assertEquals(1, ciCommands.size(), ".ci/run runs exactly the README's test command '" + cmds.get(1) + "'");
  }

  @Test
  void everyVerbAnswersHelp() {
    CommandLine cl = Main.commandLine();
    assertTrue(cl.getSubcommands().size() >= 4, "verbs: " + cl.getSubcommands().keySet());
    for (String verb : cl.getSubcommands().keySet()) {
      if (verb.equals("help")) {
        continue;
      }
      StringWriter sw = new StringWriter();
      CommandLine fresh = Main.commandLine();
      fresh.setOut(new PrintWriter(sw));
      int code = fresh.execute(verb, "--help");
      assertEquals(0, code, verb + " --help exit code");
      assertTrue(sw.toString().contains("Usage: runnel " + verb), verb + " --help prints its usage: " + sw);
    }
  }
}
