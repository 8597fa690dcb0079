package dev.runnel.connect;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;

import com.tngtech.archunit.core.domain.Dependency;
import com.tngtech.archunit.core.domain.JavaClass;
import com.tngtech.archunit.core.domain.JavaClasses;
import com.tngtech.archunit.core.importer.ClassFileImporter;
import com.tngtech.archunit.core.importer.ImportOption;
import com.tngtech.archunit.lang.ArchCondition;
import com.tngtech.archunit.lang.ArchRule;
import com.tngtech.archunit.lang.ConditionEvents;
import com.tngtech.archunit.lang.SimpleConditionEvent;
import com.tngtech.archunit.lang.syntax.ArchRuleDefinition;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.TreeSet;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The package rules of the house, read from the compiled classes by ArchUnit: stream-core never
 * depends on the connectors or on Kafka, and every package only depends on packages below it in
 * one fixed order, so the graph has no cycles. A new package must be given its place here.
 */
class ArchitectureTest {

  /**
   * Every package of the shipped code with its rank: a package may depend only on packages of a
   * strictly lower rank (packages of equal rank are independent of each other).
   */
  static final Map<String, Integer> RANK = new LinkedHashMap<>();

  static {
    rank(0, "dev.runnel.core.record", "dev.runnel.core.layout", "dev.runnel.demo");
    rank(1, "dev.runnel.core.config", "dev.runnel.core.model");
    rank(2, "dev.runnel.core.feature", "dev.runnel.core.drift");
    rank(3, "dev.runnel.core.pipeline");
    rank(4, "dev.runnel.core.evaluate");
    rank(5, "dev.runnel.connect.text");
    rank(10, "dev.runnel.connect.file", "dev.runnel.connect.broker", "dev.runnel.connect.kafka", "dev.runnel.connect.output");
    rank(11, "dev.runnel.connect.pipeline", "dev.runnel.connect.replay", "dev.runnel.connect.report",
        "dev.runnel.connect.web", "dev.runnel.connect.drift");
    rank(12, "dev.runnel.connect.recording", "dev.runnel.connect.launch");
    rank(13, "dev.runnel.connect.demo");
    rank(14, "dev.runnel.connect.cli");
  }

  private static void rank(int r, String... packages) {
    for (String p : packages) {
      RANK.put(p, r);
    }
  }

  private static JavaClasses shipped;

  @BeforeAll
  static void importClasses() {
    shipped = new ClassFileImporter()
        .withImportOption(ImportOption.Predefined.DO_NOT_INCLUDE_TESTS)
        // stream-core's test jar (its shared test helpers) is on this classpath as a jar in a full build
        .withImportOption(location -> !location.contains("-tests.jar"))
        .importPackages("dev.runnel");
  }

  @Test
  void theImportFoundEveryModule() {
    // guards the rules below against passing on an empty import
    TreeSet<String> packages = new TreeSet<>();
    for (JavaClass c : shipped) {
      packages.add(c.getPackageName());
    }
    assertEquals(new TreeSet<>(RANK.keySet()), packages,
        "every shipped package needs a rank in ArchitectureTest.RANK (and a ranked package must exist)");
  }

  @Test
  void coreNeverDependsOnConnectorsOrKafka() {
    ArchRule rule = ArchRuleDefinition.noClasses().that().resideInAPackage("dev.runnel.core..")
        .should().dependOnClassesThat().resideInAnyPackage("dev.runnel.connect..", "org.apache.kafka..");
    rule.check(shipped);
  }

  @Test
  void packagesOnlyDependDownward() {
    dependOnlyDownward().check(shipped);
  }

  @Test
  void theDownwardRuleCatchesAnUpwardDependency() {
    // the rule can fail: a made-up ranking that puts the command line below the Kafka runner
    Integer cli = RANK.put("dev.runnel.connect.cli", 9);
    try {
      AssertionError e = assertThrows(AssertionError.class, () -> dependOnlyDownward().check(shipped));
      assertFalse(e.getMessage().isEmpty());
    } finally {
      RANK.put("dev.runnel.connect.cli", cli);
    }
  }

  private static ArchRule dependOnlyDownward() {
    return ArchRuleDefinition.classes().that().resideInAPackage("dev.runnel..")
        .should(new ArchCondition<JavaClass>("depend only on packages of a lower rank") {
          @Override
          public void check(JavaClass c, ConditionEvents events) {
            String from = c.getPackageName();
            Integer own = RANK.get(from);
            for (Dependency d : c.getDirectDependenciesFromSelf()) {
              String to = d.getTargetClass().getPackageName();
              if (!to.startsWith("dev.runnel") || to.equals(from)) {
                continue;
              }
              Integer target = RANK.get(to);
              if (own == null || target == null || target >= own) {
                events.add(SimpleConditionEvent.violated(d, from + " (rank " + own + ") -> " + to
                    + " (rank " + target + "): " + d.getDescription()));
              }
            }
          }
        })
        .allowEmptyShould(false);
  }
}
