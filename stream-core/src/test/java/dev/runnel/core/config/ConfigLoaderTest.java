package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordLimits;
import dev.runnel.core.record.TimeFormat;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.time.ZoneId;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

class ConfigLoaderTest {

  private static String base() {
    try (InputStream in = ConfigLoaderTest.class.getResourceAsStream("/config/quillmarsh.yaml")) {
      return new String(in.readAllBytes(), StandardCharsets.UTF_8);
    } catch (IOException e) {
      throw new AssertionError(e);
    }
  }

  private static String mutate(String from, String to) {
    String b = base();
    assertTrue(b.contains(from), "base config contains " + from);
    return b.replace(from, to);
  }

  private static String error(String yaml) {
    ConfigException e = assertThrows(ConfigException.class, () -> ConfigLoader.parse(yaml, "quillmarsh.yaml"));
    return e.getMessage();
  }

  // Each row: text in the example configuration, its replacement ("\n" written as \n), the exact message.
  @ParameterizedTest
  @CsvSource(delimiter = '|', quoteCharacter = '`', textBlock = """
      `    max_levels: 64` | `    max_levels: -3` | features[0].max_levels: -3 is not allowed; use a whole number from 1 to 1000000
      `  forgetting:` | `  forgeting:` | model.forgeting: unknown key; did you mean forgetting?
      `target: sessions\\n` | `` | target: missing; name the number field to predict, e.g. target: sessions
      `target: sessions` | `target: hub` | target: "hub" is not allowed; name a declared number field: sessions, temperature_c, price_per_kwh
      `    factor: 0.999` | `    factor: 0.999\\n    half_life: P7D` | model.forgetting: both factor and half_life are given; keep exactly one
      `    factor: 0.999` | `    factor: 1.5` | model.forgetting.factor: 1.5 is not allowed; use a number greater than 0 and at most 1
      `  constant_term: true` | `  constant_term: false` | features[2].scaling: "standardize" is not allowed; standardize needs model.constant_term: true to absorb the centre; use scale or none
      `  time_zone: Europe/Amsterdam` | `  time_zone: Europe/Amsterdm` | input.time_zone: "Europe/Amsterdm" is not allowed; use an IANA time-zone name such as Europe/Amsterdam, or UTC
      `    cycle: hour_of_day` | `    cycle: hour_of_day\\n    name: hub` | features[1].name: "hub" is not allowed; features[0] already has that name; give each feature its own name
      `name: quillmarsh` | `name: Quill Marsh` | name: "Quill Marsh" is not allowed; use 1 to 64 lowercase letters, digits, '.', '_' or '-', starting with a letter or digit
      `    expire_after: P30D` | `    expire_after: 30 days` | features[0].expire_after: "30 days" is not allowed; use an ISO 8601 duration of at least 1 ms such as PT1H, PT90M or P30D (days, hours, minutes, seconds)
      `    field: temperature_c\\n    transform: none` | `    field: sessions\\n    transform: none` | features[2].field: "sessions" is not allowed; it is the target, and a feature must not read the target; name a declared number field: temperature_c, price_per_kwh
      `    transform: log1p` | `    transform: log2` | features[3].transform: "log2" is not allowed; use one of none, log1p, sqrt, power
      `  interval_level: 0.9` | `  interval_level: 1` | model.interval_level: 1 is not allowed; use a number between 0 and 1 (both excluded), e.g. 0.9
      `  prior_variance: 1.0` | `  prior_variance: none` | model.prior_variance: "none" is not allowed; use a number greater than 0, or the word no_prior
      `  bind: 127.0.0.1` | `  bind: 127.0.0.1\\n  enabld: true` | web.enabld: unknown key; did you mean enabled?
      `    sessions: number` | `    sessions: integer` | input.fields.sessions: "integer" is not allowed; use one of text, number, flag, time
      `    hub: text` | `    hub: text\\n   bad: [1` | quillmarsh.yaml: YAML syntax error at line 6, column 4: expected <block end>, but found '<block mapping start>' (while parsing a block mapping)
      `    format: iso8601` | `    format: iso8601\\n    field: hub` | quillmarsh.yaml: YAML syntax error at line 14, column 10: Duplicate field 'field'
      `  - kind: polynomial` | `  - kind: polynom` | features[4].kind: "polynom" is not allowed; use one of onehot, cyclic, numeric, polynomial, cross, bends, special_days, lag, smoothed
      `    degree: 5` | `    degree: 17` | features[4].degree: 17 is not allowed; use a whole number from 1 to 16
      `    max_record_bytes: 65536` | `    max_record_bytes: 1.5` | input.limits.max_record_bytes: 1.5 is not allowed; use a whole number from 64 to 16777216
      `  port: 8642` | `  port: 70000` | web.port: 70000 is not allowed; use a whole number from 0 to 65535
      `    field: observed_at` | `    field: when` | input.event_time.field: "when" is not allowed; name a declared field, e.g. declare it under input.fields as when: time
      `    field: observed_at` | `    field: hub` | input.event_time.field: "hub" is not allowed; it is a text field; name a time field (or a number field with an epoch format)
      `    field: observed_at` | `    field: sessions` | input.event_time.field: "sessions" is not allowed; it is a number field; use format epoch_millis or epoch_seconds, or declare it as time
      `    of: [hub, hour_of_day]` | `    of: [hub, temperature_c]` | features[5].of: "temperature_c" is not allowed; a cross takes onehot or cyclic features (unscaled columns), and temperature_c is numeric
      `    of: [hub, hour_of_day]` | `    of: [hub, hub]` | features[5].of: a list is not allowed; name two different features declared before this one, of kinds onehot or cyclic, e.g. of: [hub, hour_of_day]
      `    of: [hub, hour_of_day]` | `    of: [hub, hour_of_day]\n  - kind: cross\n    name: again\n    of: [hour_of_day, hub]` | features[6].of: a list is not allowed; features[5] already crosses hub with hour_of_day
      `    of: [hub, hour_of_day]` | `    of: [hub, later]\n  - kind: onehot\n    field: hub\n    name: later` | features[5].of: "later" is not allowed; name two features declared before this one, of kinds onehot or cyclic, e.g. of: [hub, hour_of_day]
      `    max_levels: 64` | `    max_level: 64` | features[0].max_level: unknown key; did you mean max_levels?
      `    transform: none` | `    transform: none\\n    exponent: 2` | features[2].exponent: only allowed with transform: power; remove it or set transform: power
      `    transform: log1p` | `    transform: power` | features[3].exponent: missing; give the power for transform: power, e.g. exponent: 0.5
      `    max_year: 2200` | `    max_year: 1900` | input.limits.max_year: 1900 is not allowed; use a year from min_year (1970) to 9999
      `  forgetting:\\n    factor: 0.999` | `  forgetting: {}` | model.forgetting: neither factor nor half_life is given; give exactly one, e.g. factor: 0.999 or half_life: P7D
      `  client_properties: {security.protocol: SASL_SSL, sasl.jaas.config: "${RUNNEL_JAAS}"}` | `  client_properties: {a: [1]}` | kafka.client_properties.a: a list is not allowed; use a single value (text, number or true/false)
      `  - kind: onehot\\n    field: hub` | `  - kind: onehot\\n    field: holidays` | features[0].field: "holidays" is not allowed; name a declared text or flag field: hub, holiday
      """)
  void malformedConfiguration_namesKeyValueAndWhatIsAllowed(String from, String to, String message) {
    assertEquals(message, error(mutate(from.replace("\\n", "\n"), to.replace("\\n", "\n"))));
  }

  @Test void emptyAndNonMappingDocuments_areRejected() {
    assertEquals("quillmarsh.yaml: the configuration is empty; start with name: and input:", error(""));
    assertEquals("quillmarsh.yaml: the configuration is a list; it must be a mapping with name:, input:, target:, features:",
        error("- a\n- b\n"));
    assertEquals("name: missing; give the pipeline a name, e.g. name: quillmarsh", error("input: {fields: {y: number}}\ntarget: y\n"));
    assertEquals("input.fields: missing; declare the input fields, e.g. fields: {hub: text, sessions: number}",
        error("name: a\ninput: {topic: t}\ntarget: y\n"));
    assertEquals("nme: unknown key; did you mean name?", error("nme: a\n"));
    assertEquals("input.feilds: unknown key; did you mean fields?", error("name: a\ninput: {feilds: {}}\n"));
  }

  @Test void exampleConfiguration_parsesIntoValues() {
    PipelineConfig c = ConfigLoader.parse(base(), "quillmarsh.yaml");
    assertEquals("quillmarsh", c.name());
    assertEquals(Optional.of("quillmarsh.sessions"), c.input().topic());
    assertEquals(FieldType.FLAG, c.input().schema().type(c.input().schema().slot("holiday")));
    assertEquals(new PipelineConfig.EventTime("observed_at", TimeFormat.ISO8601), c.input().eventTime().orElseThrow());
    assertEquals(ZoneId.of("Europe/Amsterdam"), c.input().timeZone());
    assertEquals(new RecordLimits(256, 65536, 1.0e12, 1970, 2200), c.input().limits());
    assertEquals(6, c.features().size());
    assertEquals(new FeatureConfig.OneHot("hub", "hub", 64, 1, 30L * 86_400_000L, 0), c.features().get(0));
    assertEquals(new FeatureConfig.Cyclic("hour_of_day", Cycle.HOUR_OF_DAY, null, 2), c.features().get(1));
    assertEquals(new FeatureConfig.Numeric("price_per_kwh", "price_per_kwh", Transform.LOG1P, 1.0, Scaling.STANDARDIZE, 0, 0),
        c.features().get(3));
    assertEquals(new FeatureConfig.Polynomial("temp_poly", "temperature_c", 5, Scaling.STANDARDIZE, 0, 0), c.features().get(4));
    assertEquals(new FeatureConfig.Cross("hub*hour_of_day", List.of("hub", "hour_of_day")), c.features().get(5));
    assertEquals(0.999, c.model().forgettingFactor());
    assertEquals(3_600_000L, c.outputs().snapshotEveryMillis());
    assertEquals(Map.of("security.protocol", "SASL_SSL", "sasl.jaas.config", "${RUNNEL_JAAS}"), c.kafka().clientProperties());
    assertEquals(new PipelineConfig.Web(true, "127.0.0.1", 8642), c.web());
  }

  @Test void echoFieldsAndDigits_areRead_andABadFieldIsNamedWithTheDeclaredOnes() {
    String base = "name: m\ninput:\n  fields: {y: number, hub: text, open: flag}\ntarget: y\n"
        + "features:\n  - {kind: onehot, field: hub}\n";
    PipelineConfig c = ConfigLoader.parse(base + "outputs: {echo_fields: [open, hub], significant_digits: 6}\n", "m.yaml");
    assertEquals(List.of("open", "hub"), c.outputs().echoFields());
    assertEquals(6, c.outputs().significantDigits());
    ConfigException e = assertThrows(ConfigException.class,
        () -> ConfigLoader.parse(base + "outputs: {echo_fields: [hub, y]}\n", "m.yaml"));
    assertTrue(e.getMessage().contains("outputs.echo_fields[1]") && e.getMessage().contains("hub, open"), e.getMessage());
    ConfigException d = assertThrows(ConfigException.class,
        () -> ConfigLoader.parse(base + "outputs: {significant_digits: 16}\n", "m.yaml"));
    assertTrue(d.getMessage().contains("outputs.significant_digits"), d.getMessage());
  }

  @Test void minimalConfiguration_getsTheDocumentedDefaults() {
    PipelineConfig c = ConfigLoader.parse("name: m\ninput:\n  fields: {y: number, x: number}\ntarget: y\n"
        + "features:\n  - {kind: numeric, field: x}\n  - {kind: cyclic, cycle: day_of_week}\n", "m.yaml");
    assertEquals(Optional.empty(), c.input().topic());
    assertEquals(Optional.empty(), c.input().eventTime());
    assertEquals(ZoneId.of("UTC"), c.input().timeZone());
    assertEquals(RecordLimits.DEFAULTS, c.input().limits());
    assertEquals(new FeatureConfig.Numeric("x", "x", Transform.NONE, 1.0, Scaling.STANDARDIZE, 0, 0), c.features().get(0));
    assertEquals(new FeatureConfig.Cyclic("day_of_week", Cycle.DAY_OF_WEEK, null, 1), c.features().get(1));
    assertEquals(new PipelineConfig.Model(true, 1.0, false, 1.0, 0, true, 0.9, 500), c.model());
    assertEquals(new PipelineConfig.Outputs(1000, 0, 1000), c.outputs());
    assertEquals(new PipelineConfig.Kafka("", 1000, 5000, Map.of(), new PipelineConfig.Embedded(".runnel/broker", 0)), c.kafka());
    assertEquals(new PipelineConfig.Web(true, "127.0.0.1", 8642), c.web());
    assertEquals(0, c.targetSlot());
  }

  @Test void modelSettingsDefaults_equalAnEmptyModelSection() {
    // ModelSettings.defaults() once said prior variance 100 and noise half-life 1000 while the loader gave 1 and 500
    PipelineConfig.Model m = ConfigLoader.parse("name: m\ninput:\n  fields: {y: number}\ntarget: y\n", "m.yaml").model();
    dev.runnel.core.model.ModelSettings d = dev.runnel.core.model.ModelSettings.defaults();
    assertEquals(d.priorVariance(), m.priorVariance());
    assertEquals(d.constantTerm(), m.constantTerm());
    assertEquals(d.windupGuard(), m.windupGuard());
    assertEquals(d.intervalZ(), dev.runnel.core.model.ModelSettings.zForLevel(m.intervalLevel()));
    assertEquals(d.noiseHalfLifeRecords(), m.noiseHalfLifeRecords());
  }

  @Test void noConstantTerm_defaultsScalingToScale_andHalfLifeAndNoPriorParse() {
    PipelineConfig c = ConfigLoader.parse("name: m\ninput:\n  fields: {y: number, x: number}\ntarget: y\n"
        + "features:\n  - {kind: numeric, field: x}\n"
        + "model: {constant_term: false, prior_variance: no_prior, forgetting: {half_life: P7D}}\n", "m.yaml");
    assertEquals(Scaling.SCALE, ((FeatureConfig.Numeric) c.features().get(0)).scaling());
    assertTrue(c.model().diffuse());
    assertEquals(Double.POSITIVE_INFINITY, c.model().priorVariance());
    assertEquals(7L * 86_400_000L, c.model().forgettingHalfLifeMillis());
    assertTrue(c.model().forgetsByTime());
    assertFalse(c.model().constantTerm());
  }

  @Test void nearestKey_usesEditDistance() {
    // Levenshtein distance (common practice): kitten -> sitting is 3.
    assertEquals(3, ConfigLoader.editDistance("kitten", "sitting"));
    assertEquals(null, ConfigLoader.nearest("zzzzzz", List.of("name", "input")));
  }
}
