package dev.runnel.core.corpus;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.time.OffsetDateTime;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.ArrayList;
import java.util.HexFormat;
import java.util.List;
import java.util.Locale;
import java.util.regex.Matcher;
import java.util.regex.Pattern;

/**
 * The corpus of bad and awkward input records ({@code src/test/resources/corpus/input-kinds.jsonl})
 * and the feeds it is mixed into: the recorded demo sample under the demo configuration, with its
 * event time written in ISO 8601 (as recorded), epoch milliseconds or epoch seconds. The connectors
 * module's Kafka run (CorpusOnKafkaTest) uses this class too, from stream-core's test jar.
 */
public final class InputCorpus {

  /** The corpus, from a module's folder (tests run there: stream-core's or connectors'). */
  public static final Path FILE = Path.of("..", "stream-core", "src", "test", "resources", "corpus", "input-kinds.jsonl");
  /** The demo configuration and its recorded sample (invented data). */
  public static final Path DEMO_CONFIG = Path.of("..", "demo-data", "src", "main", "resources", "dev", "runnel", "demo", "quillmarsh.yaml");
  public static final Path SAMPLE = Path.of("..", "demo-data", "samples", "quillmarsh-small.jsonl");
  /**
   * The feeds, by the word of their event-time format; {@code forecast} is the ISO 8601 feed under the
   * demo configuration with {@code input.forecast} (entity {@code hub}, target time {@code hour_start},
   * a field the sample leaves out, so each sample record's target time is its event time).
   */
  public static final List<String> FEEDS = List.of("iso8601", "epoch_millis", "epoch_seconds", "forecast");

  /** One kind: its name, expected outcome ("accepted" or a reason id), feed, record template and note. */
  public record Kind(String kind, String expected, String feed, byte[] template, String note) { }

  private InputCorpus() { }

  /** Every kind in file order. @throws IllegalArgumentException on a malformed corpus line */
  public static List<Kind> load(Path file) throws IOException {
    ObjectMapper json = new ObjectMapper();
    List<Kind> out = new ArrayList<>();
    for (String line : Files.readAllLines(file, StandardCharsets.UTF_8)) {
      if (line.isBlank() || line.startsWith("#")) continue;
      JsonNode n = json.readTree(line);
      byte[] t = n.has("record_hex") ? HexFormat.of().parseHex(n.get("record_hex").asText())
          : n.get("record").asText().getBytes(StandardCharsets.UTF_8);
      out.add(new Kind(n.get("kind").asText(), n.get("expected").asText(), n.path("feed").asText("iso8601"), t, n.path("note").asText()));
    }
    return out;
  }

  /**
   * The demo configuration's YAML with the event time in {@code feed}'s format, and its target
   * declared a count ({@code model.target_non_negative: true}: sessions are never negative, so the
   * corpus's negative target is rejected; the demo sample has none).
   */
  public static String configYaml(String feed) throws IOException {
    String yaml = Files.readString(DEMO_CONFIG);
    String from = "format: iso8601";
    if (!yaml.contains(from)) throw new IllegalStateException("the demo configuration no longer says " + from);
    String model = "\nmodel:\n";
    if (!yaml.contains(model)) throw new IllegalStateException("the demo configuration no longer has a model section");
    yaml = yaml.replace(model, model + "  target_non_negative: true\n");
    if (feed.equals("forecast")) {
      // the demo configuration has input.forecast (entity hub, target time observed_at); the corpus's
      // actuals are checked under the default policy for corrections (reject)
      String replace = yaml.replaceAll("(?m)^    corrections: replace.*$", "    corrections: reject");
      if (replace.equals(yaml)) throw new IllegalStateException("the demo configuration no longer says corrections: replace");
      return replace;
    }
    // the other feeds insert records that repeat each other's (hub, time, value): no memory of learned actuals
    yaml = dev.runnel.core.pipeline.StreamClockPolicyTest.withoutLearnedMemory(yaml);
    return yaml.replace(from, "format: " + feed);
  }

  private static final Pattern TIME = Pattern.compile("\"issued_at\":\"([^\"]*)\"");   // the demo's event time
  private static final Pattern PAD = Pattern.compile("\\{\\{pad:(\\d+)\\}\\}");
  private static final DateTimeFormatter OFFSET_TIME = DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ssxxx", Locale.ROOT);

  /** A feed: its lines and, per line, the event time of the last line up to it that had one (epoch millis). */
  public record Feed(List<byte[]> lines, List<Long> timeBefore, List<String> isoBefore) { }

  /** The demo sample with its event times written in {@code feed}'s format (lines whose time does not parse stay as they are). */
  public static Feed feed(String feed) throws IOException {
    List<byte[]> lines = new ArrayList<>();
    List<Long> times = new ArrayList<>();
    List<String> isos = new ArrayList<>();
    long last = Long.MIN_VALUE;
    String lastIso = null;
    for (String l : Files.readAllLines(SAMPLE, StandardCharsets.UTF_8)) {
      if (l.isBlank()) continue;
      Matcher m = TIME.matcher(l);
      String out = l;
      if (m.find()) {
        try {
          OffsetDateTime t = OffsetDateTime.parse(m.group(1)); // java.time
          long ms = t.toInstant().toEpochMilli();
          if (t.getYear() >= 1970 && t.getYear() <= 2200) { // the sample's own absurd years are no time to copy
            last = ms;
            lastIso = m.group(1);
          }
          if (feed.startsWith("epoch")) out = l.substring(0, m.start()) + "\"issued_at\":" + epoch(ms, feed) + l.substring(m.end());
        } catch (java.time.format.DateTimeParseException e) {
          // a corrupt line of the sample: kept as it is
        }
      }
      lines.add(out.getBytes(StandardCharsets.UTF_8));
      times.add(last);
      isos.add(lastIso);
    }
    return new Feed(lines, times, isos);
  }

  private static String epoch(long ms, String feed) {
    return feed.equals("epoch_seconds") ? Long.toString(Math.floorDiv(ms, 1000L)) : Long.toString(ms);
  }

  /**
   * The record of {@code kind} placed after a feed line whose event time is {@code ms}
   * ({@code iso} as written there): the templates filled in.
   */
  public static byte[] expand(Kind kind, long ms, String iso) {
    String s = new String(kind.template(), StandardCharsets.ISO_8859_1); // templates are ASCII
    String time = kind.feed().startsWith("epoch") ? epoch(ms, kind.feed()) : "\"" + iso + "\"";
    s = s.replace("{{time}}", time)
        .replace("{{time_offset}}", "\"" + OFFSET_TIME.format(OffsetDateTime.ofInstant(Instant.ofEpochMilli(ms), ZoneOffset.ofHoursMinutes(5, 30))) + "\"")
        .replace("{{millis}}", Long.toString(ms))
        .replace("{{seconds}}", Long.toString(Math.floorDiv(ms, 1000L)));
    Matcher m = PAD.matcher(s);
    StringBuilder b = new StringBuilder();
    while (m.find()) m.appendReplacement(b, "x".repeat(Integer.parseInt(m.group(1))));
    m.appendTail(b);
    return b.toString().getBytes(StandardCharsets.ISO_8859_1);
  }

  /** A feed with corpus records mixed in: the lines, and per line the kind placed there (null for a feed line). */
  public record Mixed(List<byte[]> lines, List<Kind> kindAt) {
    /** The lines without the corpus records expected to be rejected: the clean stream. */
    public List<byte[]> withoutRejected() {
      List<byte[]> out = new ArrayList<>();
      for (int i = 0; i < lines.size(); i++) {
        Kind k = kindAt.get(i);
        if (k == null || k.expected().equals("accepted")) out.add(lines.get(i));
      }
      return out;
    }
  }

  /**
   * The feed with the kinds of that feed mixed in at even spacing, each right after a feed line
   * that has an event time (so the templates have one), the first after the first tenth of the feed.
   */
  public static Mixed mix(Feed feed, List<Kind> kinds) {
    List<byte[]> out = new ArrayList<>();
    List<Kind> at = new ArrayList<>();
    int n = feed.lines().size();
    int start = n / 10;
    int every = Math.max(1, (n - start) / (kinds.size() + 1));
    int k = 0;
    for (int i = 0; i < n; i++) {
      out.add(feed.lines().get(i));
      at.add(null);
      if (i >= start && (i - start) % every == 0 && k < kinds.size() && feed.timeBefore().get(i) != Long.MIN_VALUE) {
        Kind kind = kinds.get(k++);
        out.add(expand(kind, feed.timeBefore().get(i), feed.isoBefore().get(i)));
        at.add(kind);
      }
    }
    if (k != kinds.size()) throw new IllegalStateException("placed " + k + " of " + kinds.size() + " kinds");
    return new Mixed(out, at);
  }

  /** The kinds of one feed. */
  public static List<Kind> ofFeed(List<Kind> all, String feed) {
    List<Kind> out = new ArrayList<>();
    for (Kind k : all) if (k.feed().equals(feed)) out.add(k);
    return out;
  }
}
