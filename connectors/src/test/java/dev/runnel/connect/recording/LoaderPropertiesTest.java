package dev.runnel.connect.recording;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;

import java.util.Map;
import java.util.Properties;
import org.junit.jupiter.api.Test;

/** What {@code runnel load} hands its producer and admin client from {@code kafka.client_properties}. */
class LoaderPropertiesTest {

  private static final Map<String, String> USER = Map.of(
      "security.protocol", "SASL_SSL",
      "sasl.mechanism", "PLAIN",
      "producer.linger.ms", "50",
      "admin.request.timeout.ms", "9000",
      "consumer.fetch.min.bytes", "1",
      "bootstrap.servers", "not-these:1");

  @Test
  void producer_getsSharedAndProducerKeys_userTuningWins_bootstrapIsOurs() {
    Properties p = Loader.producerProperties("broker:9092", USER);
    assertEquals("SASL_SSL", p.get("security.protocol"));
    assertEquals("PLAIN", p.get("sasl.mechanism"));
    assertEquals("50", p.get("linger.ms"), "the user's producer.linger.ms replaces our 20");
    assertEquals("all", p.get("acks"));
    assertEquals("true", p.get("enable.idempotence"));
    assertEquals("broker:9092", p.get("bootstrap.servers"));
    assertFalse(p.containsKey("request.timeout.ms"), "admin. keys are for the admin client only");
    assertFalse(p.containsKey("fetch.min.bytes"), "consumer. keys are for consumers only");
  }

  @Test
  void admin_getsSharedAndAdminKeys() {
    Properties a = Loader.adminProperties("broker:9092", USER);
    assertEquals("SASL_SSL", a.get("security.protocol"));
    assertEquals("PLAIN", a.get("sasl.mechanism"));
    assertEquals("9000", a.get("request.timeout.ms"));
    assertEquals("broker:9092", a.get("bootstrap.servers"));
    assertFalse(a.containsKey("linger.ms"), "producer. keys are for the producer only");
  }
}
