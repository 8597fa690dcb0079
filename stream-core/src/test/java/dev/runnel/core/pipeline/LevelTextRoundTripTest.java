package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.RollingVocabulary;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Category levels survive a checkpoint exactly (issue 14, item 7: a level holding a lone UTF-16
 * surrogate was renamed after a restart, since the checkpoint writes levels as UTF-8). Records whose
 * text holds an unpaired surrogate are rejected as {@code not_unicode}, so no level can hold one;
 * every level that is accepted, whatever characters it has (controls, NUL, noncharacters, pairs
 * escaped or as UTF-8), is restored as the same string, and the restored pipeline continues bit
 * for bit.
 */
class LevelTextRoundTripTest {

  private static final Path DEMO_CONFIG = Path.of("..", "demo-data", "src", "main", "resources", "dev", "runnel", "demo", "quillmarsh.yaml");

  /** A random text: ASCII, controls, any BMP char that is not a surrogate, pairs; with a lone surrogate when asked. */
  static String text(Random r, boolean lone) {
    StringBuilder s = new StringBuilder();
    int n = 1 + r.nextInt(12);
    for (int i = 0; i < n; i++) {
      switch (r.nextInt(6)) {
        case 0: s.append((char) r.nextInt(0x20)); break;
        case 1: s.append((char) (0x80 + r.nextInt(0xD800 - 0x80))); break;
        case 2: s.append((char) (0xE000 + r.nextInt(0x2000))); break; // private use up to U+FFFF (noncharacters too)
        case 3: s.appendCodePoint(0x10000 + r.nextInt(0x100000)); break;
        default: s.append((char) ('A' + r.nextInt(26))); break;
      }
    }
    if (lone) {
      char sur = (char) (0xD800 + r.nextInt(0x800));
      s.insert(r.nextInt(s.length() + 1), sur);
      // keep it unpaired: nothing that would complete it may stand next to it
      String t = s.toString();
      for (int i = 0; i < t.length(); i++) {
        if (Character.isSurrogate(t.charAt(i)) && t.charAt(i) != sur) return text(r, true);
      }
    }
    return s.toString();
  }

  /** The JSON string literal of {@code s}: quotes, backslashes and controls escaped; other chars escaped at random, surrogates always. */
  static String json(String s, Random r) {
    StringBuilder b = new StringBuilder("\"");
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      boolean pairStart = Character.isHighSurrogate(c) && i + 1 < s.length() && Character.isLowSurrogate(s.charAt(i + 1));
      if (c == '"' || c == '\\') {
        b.append('\\').append(c);
      } else if (pairStart && r.nextBoolean()) {
        b.append(s, i, i + 2); // the pair as UTF-8
        i++;
      } else if (c < 0x20 || Character.isSurrogate(c) || r.nextInt(8) == 0) {
        b.append(String.format(Locale.ROOT, "\\u%04x", (int) c));
      } else {
        b.append(c);
      }
    }
    return b.append('"').toString();
  }

  static List<String> levels(PipelineStep s) {
    List<String> out = new ArrayList<>();
    RollingVocabulary v = s.featurizer().vocabulary("hub");
    for (RollingVocabulary.Level l : v.levelsInOrder()) out.add(l.key());
    return out;
  }

  @Test void everyAcceptedLevelIsRestoredExactlyAndLoneSurrogatesAreRejected() throws IOException {
    // no hub expiry: every admitted level stays to be checked
    PipelineConfig cfg = ConfigLoader.parse(Files.readString(DEMO_CONFIG).replace(", expire_after: PT12H", ""), "levels.yaml");
    Random r = new Random(7);
    List<byte[]> feed = new ArrayList<>();
    List<String> texts = new ArrayList<>();
    List<Boolean> loneAt = new ArrayList<>();
    List<String> pool = new ArrayList<>();
    for (int k = 0; k < 40; k++) pool.add(text(r, false));
    long t0 = java.time.Instant.parse("2026-03-25T00:00:00Z").getEpochSecond(); // java.time
    for (int i = 0; i < 3000; i++) {
      boolean lone = r.nextInt(10) == 0;
      String hub = lone ? text(r, true) : pool.get(r.nextInt(pool.size()));
      String time = java.time.Instant.ofEpochSecond(t0 + 60L * i).toString();
      String rec = "{\"kind\":\"actual\",\"hub\":" + json(hub, r) + ",\"issued_at\":\"" + time + "\",\"weather\":\"clear\","
          + "\"temperature_c\":" + (r.nextInt(300) / 10.0) + ",\"price_per_kwh\":0.2,\"sessions\":" + r.nextInt(60) + "}";
      feed.add(rec.getBytes(StandardCharsets.UTF_8));
      texts.add(hub);
      loneAt.add(lone);
    }
    PipelineStep a = new PipelineStep(cfg);
    List<String> outcome = new ArrayList<>();
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord rec) { outcome.add("ok"); }
      @Override public void reject(RejectReason reason, String detail) { outcome.add(reason.id()); }
      @Override public void snapshotDue() { }
    };
    int half = feed.size() / 2;
    for (int i = 0; i < half; i++) {
      byte[] b = feed.get(i);
      a.process(b, 0, b.length, 0L, 0, i, sink);
    }
    int lone = 0;
    for (int i = 0; i < half; i++) {
      final int at = i;
      assertEquals(loneAt.get(i) ? "not_unicode" : "ok", outcome.get(i), () -> "record " + at + ": " + new String(feed.get(at), StandardCharsets.UTF_8));
      if (loneAt.get(i)) lone++;
    }
    assertTrue(lone > 50, lone + " records with a lone surrogate");
    List<String> before = levels(a);
    assertTrue(before.size() >= 30, before.size() + " levels");
    for (String l : before) assertTrue(pool.contains(l), "a level is one of the accepted texts");
    // some levels hold supplementary characters, controls and NUL-like chars
    assertTrue(before.stream().anyMatch(l -> l.codePoints().anyMatch(c -> c >= 0x10000)), "a level with a pair");
    assertTrue(before.stream().anyMatch(l -> l.chars().anyMatch(c -> c < 0x20)), "a level with a control char");

    byte[] cp = a.checkpoint();
    PipelineStep b = new PipelineStep(cfg);
    b.restore(cp);
    assertEquals(before, levels(b), "levels after a restore, char for char");
    assertArrayEquals(cp, b.checkpoint(), "the restored state checkpoints to the same bytes");
    // both go on over the rest of the feed and end in the same state
    for (int i = half; i < feed.size(); i++) {
      byte[] x = feed.get(i);
      a.process(x, 0, x.length, 0L, 0, i, sink);
      b.process(x, 0, x.length, 0L, 0, i, sink);
    }
    assertEquals(levels(a), levels(b));
    assertArrayEquals(a.checkpoint(), b.checkpoint(), "the restored pipeline continues bit for bit");
  }
}
