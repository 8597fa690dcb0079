package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Map;
import org.junit.jupiter.api.Test;

class ClientConfigTest {
  private static final Map<String, String> ENV = Map.of("KAFKA_PASS", "s3cr3t-value", "USER", "svc");

  @Test void environmentVariablesAreResolvedAndPrefixesSelectTheClient() {
    Map<String, String> props = Map.of(
        "sasl.jaas.config", "org.apache.kafka.common.security.plain.PlainLoginModule required username=\"${USER}\" password=\"${KAFKA_PASS}\";",
        "security.protocol", "SASL_SSL",
        "producer.linger.ms", "20",
        "consumer.fetch.min.bytes", "1024",
        "linger.ms", "5");
    Map<String, Object> producer = ClientConfig.forClient(props, ClientConfig.Kind.PRODUCER, ENV::get);
    Map<String, Object> consumer = ClientConfig.forClient(props, ClientConfig.Kind.CONSUMER, ENV::get);
    assertEquals("org.apache.kafka.common.security.plain.PlainLoginModule required username=\"svc\" password=\"s3cr3t-value\";",
        producer.get("sasl.jaas.config"));
    assertEquals("20", producer.get("linger.ms"), "a prefixed key wins for its client");
    assertEquals("5", consumer.get("linger.ms"));
    assertEquals("1024", consumer.get("fetch.min.bytes"));
    assertFalse(producer.containsKey("fetch.min.bytes"));
    assertFalse(producer.containsKey("consumer.fetch.min.bytes"));
  }

  @Test void aMissingVariableNamesKeyAndVariableButNoValue() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> ClientConfig.forClient(Map.of("ssl.keystore.password", "${NOT_SET_ANYWHERE}"), ClientConfig.Kind.ADMIN, ENV::get));
    assertTrue(e.getMessage().contains("ssl.keystore.password") && e.getMessage().contains("NOT_SET_ANYWHERE"), e.getMessage());
  }

  @Test void aMalformedJaasConfigurationNamesTheKeyAndNoPartOfTheValue() {
    // without the closing quote of username the parser reads the password as a key and names it
    // (message of kafka-clients 4.4.0 JaasConfig: "Value not specified for key '...' in JAAS config")
    String bad = "org.apache.kafka.common.security.plain.PlainLoginModule required username=\"svc password=\"${KAFKA_PASS}\";";
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> ClientConfig.forClient(Map.of("producer.sasl.jaas.config", bad), ClientConfig.Kind.PRODUCER, ENV::get));
    assertTrue(e.getMessage().startsWith("client property producer.sasl.jaas.config (kafka.client_properties) is not a valid JAAS"
        + " configuration: Value not specified for key '****' in JAAS config; write one login module"), e.getMessage());
    assertFalse(e.getMessage().contains("s3cr3t"), e.getMessage());
    IllegalArgumentException noSemicolon = assertThrows(IllegalArgumentException.class, () -> new ExactlyOnceRunner(
        RunnerSettings.of("jaas", "in", "127.0.0.1:9").withClientProperties(Map.of("sasl.jaas.config",
            "org.apache.kafka.common.security.plain.PlainLoginModule required username=\"svc\" password=\"x\"")),
        tp -> null, ENV::get));
    assertTrue(noSemicolon.getMessage().contains("sasl.jaas.config") && noSemicolon.getMessage().contains("not terminated by semi-colon"),
        noSemicolon.getMessage());
  }

  @Test void secretsAreMaskedWhenPrinted() {
    String printed = ClientConfig.masked(Map.of("sasl.jaas.config", "x password=\"s3cr3t-value\"", "ssl.truststore.password", "s3cr3t-value",
        "sasl.oauthbearer.token.endpoint.url", "https://example.invalid/token", "client.id", "visible"));
    assertFalse(printed.contains("s3cr3t-value"), printed);
    assertTrue(printed.contains("client.id=visible"), printed);
    assertTrue(printed.contains("ssl.truststore.password=****"), printed);
  }
}
