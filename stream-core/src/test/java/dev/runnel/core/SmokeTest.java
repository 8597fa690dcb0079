package dev.runnel.core;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.runnel.core.record.RejectReason;
import org.junit.jupiter.api.Test;

class SmokeTest {
  @Test void rejectIdsAreStable() { assertEquals("malformed_json", RejectReason.MALFORMED_JSON.id()); }
}
