package dev.runnel.connect.testing;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.tngtech.archunit.core.domain.JavaClass;
import com.tngtech.archunit.core.domain.JavaClasses;
import com.tngtech.archunit.core.domain.JavaCodeUnit;
import com.tngtech.archunit.core.domain.JavaConstructorCall;
import com.tngtech.archunit.core.importer.ClassFileImporter;
import com.tngtech.archunit.core.importer.ImportOption;
import dev.runnel.connect.broker.EmbeddedBroker;
import java.util.Set;
import java.util.TreeSet;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * Every Kafka test obtains its broker through the one seam, {@link EmbeddedKafkaExtension}, as a
 * {@link TestBroker}, so {@code -Pcontainers} runs all of them against a container broker. Only the
 * tests of the embedded launcher itself may take or build an {@link EmbeddedBroker}. Read from the
 * compiled test classes with ArchUnit; the failure message lists the offenders.
 */
class BrokerSeamTest {
  /**
   * The tests of the embedded launcher (they test that broker, not Runnel against a broker), and
   * BrokerAwayTest, which kills and restarts a broker of its own so that the shared one is never
   * restarted twice in a run (the crash-and-restart case against any broker is BrokerRestartTest).
   */
  private static final Set<String> EMBEDDED_ONLY = Set.of("dev.runnel.connect.broker.EmbeddedBrokerTest",
      "dev.runnel.connect.kafka.BrokerAwayTest");

  private static JavaClasses tests;

  @BeforeAll
  static void importTests() {
    tests = new ClassFileImporter()
        .withImportOption(ImportOption.Predefined.ONLY_INCLUDE_TESTS)
        .importPackages("dev.runnel.connect");
  }

  @Test
  void everyKafkaTestTakesATestBroker() {
    TreeSet<String> seam = new TreeSet<>();
    TreeSet<String> bypass = new TreeSet<>();
    for (JavaClass c : tests) {
      // the benchmarks (src/bench/java, compiled with the tests) start their own broker on purpose
      if (c.getPackageName().equals("dev.runnel.connect.testing") || c.getPackageName().equals("dev.runnel.connect.bench")
          || EMBEDDED_ONLY.contains(outer(c))) {
        continue;
      }
      for (JavaCodeUnit u : c.getCodeUnits()) {
        for (JavaClass p : u.getRawParameterTypes()) {
          if (p.isEquivalentTo(TestBroker.class)) {
            seam.add(outer(c));
          } else if (p.isEquivalentTo(EmbeddedBroker.class)) {
            bypass.add(u.getFullName());
          }
        }
        for (JavaConstructorCall call : u.getConstructorCallsFromSelf()) {
          if (call.getTargetOwner().isEquivalentTo(EmbeddedBroker.class)) {
            bypass.add(u.getFullName());
          }
        }
      }
    }
    assertEquals(new TreeSet<>(), bypass,
        "these tests take or build an EmbeddedBroker instead of a TestBroker from EmbeddedKafkaExtension");
    // the Kafka behaviours the container profile must cover (issue: exactly once under SIGKILL,
    // broker restart, rebalance, rejects, equality with the file replay)
    for (String name : new String[] {"kafka.CrashRecoveryTest", "pipeline.PipelineCrashTest", "kafka.BrokerRestartTest",
        "kafka.ExactlyOnceRunnerTest", "pipeline.PipelineOnKafkaTest", "replay.TopicReplayTest"}) {
      assertTrue(seam.contains("dev.runnel.connect." + name), name + " should take a TestBroker; the seam has " + seam);
    }
  }

  private static String outer(JavaClass c) {
    JavaClass o = c;
    while (o.getEnclosingClass().isPresent()) {
      o = o.getEnclosingClass().get();
    }
    return o.getName();
  }
}
