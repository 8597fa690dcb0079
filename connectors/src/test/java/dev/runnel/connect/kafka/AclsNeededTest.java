package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/**
 * The ACLs the authorization failure names, against what the runner does with each resource (the
 * operations are Kafka's ACL operations, from its authorization documentation, from memory):
 * the input is read in the group, the state topic written in the transactions and read when a
 * partition is restored, {@code <name>.shares} written in the transactions and read with
 * read_committed by every instance (a topic read needs READ, not only WRITE), missing topics created.
 */
class AclsNeededTest {

  private static final Pattern OPS = Pattern.compile("((?:READ|WRITE|DESCRIBE|CREATE)(?:(?:, | and )(?:READ|WRITE|DESCRIBE|CREATE))*) on ");

  /** The operations of the clause ("OPS on resources") whose resources name {@code resource}. */
  private static String operationsOn(String message, String resource) {
    Matcher m = OPS.matcher(message);
    List<int[]> clauses = new ArrayList<>();
    while (m.find()) {
      clauses.add(new int[] {m.start(1), m.end(1), m.end()});
    }
    for (int i = 0; i < clauses.size(); i++) {
      int to = i + 1 < clauses.size() ? clauses.get(i + 1)[0] : message.length();
      String resources = message.substring(clauses.get(i)[2], to);
      if (Pattern.compile("(^|[ ,])" + Pattern.quote(resource) + "($|[ ,])").matcher(resources).find()) {
        return message.substring(clauses.get(i)[0], clauses.get(i)[1]);
      }
    }
    throw new AssertionError("the message grants nothing on " + resource + ": " + message);
  }

  @Test
  void everyTopicTheRunnerReadsIsNamedWithRead() {
    RunnerSettings s = RunnerSettings.of("hubs", "hubs.in", "localhost:9092").withInstanceId("a");
    String msg = ExactlyOnceRunner.aclsNeeded(s);
    assertTrue(operationsOn(msg, "hubs.shares").contains("READ"), "READ on the shares topic: " + msg);
    assertTrue(operationsOn(msg, "hubs.shares").contains("WRITE"), "WRITE on the shares topic: " + msg);
    assertTrue(operationsOn(msg, "hubs.state").contains("READ"), "READ on the state topic: " + msg);
    assertTrue(operationsOn(msg, "hubs.state").contains("WRITE"), "WRITE on the state topic: " + msg);
    assertTrue(operationsOn(msg, "hubs.in").contains("READ"), msg);
    assertTrue(operationsOn(msg, "group " + s.groupId()).contains("READ"), msg);
    assertTrue(operationsOn(msg, "hubs.predictions").contains("WRITE"), msg);
    assertTrue(operationsOn(msg, "transactional id " + s.transactionalId()).contains("DESCRIBE"), msg);
    assertTrue(msg.contains("CREATE"), "CREATE for the topics it creates: " + msg);
  }
}
