package dev.runnel.core.config;

import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordLimits;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.TimeFormat;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.ZoneId;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.regex.Pattern;

/**
 * Reads a pipeline configuration from YAML and checks every key, each defined once in {@link ConfigKeys}
 * (name, type, default, check). Cold path: the YAML is read into a tree and walked by hand, tracking
 * the key path for messages. What loads but is probably unintended becomes a {@link ConfigWarning}
 * in {@link PipelineConfig#warnings()}.
 *
 * <p>Every problem throws {@link ConfigException} with a message of the form
 * {@code <key path>: <value> is not allowed; <what is allowed>}, {@code <key path>: missing; <what
 * to write>} or {@code <key path>: unknown key; did you mean <nearest key>?}. YAML syntax errors
 * say {@code <source>: YAML syntax error at line L, column C: ...}.
 */
public final class ConfigLoader {

  private static final Pattern NAME = Pattern.compile("[a-z0-9][a-z0-9._-]{0,63}");
  private static final String FEATURE_KINDS = "onehot, cyclic, numeric, polynomial, cross, bends, special_days, lag, smoothed";

  /** The most knots a bends feature may have. */
  static final int MAX_KNOTS = 64;
  /** The most grid cells a lag keeps per entity ((offset + tolerance) / grid + 2). */
  static final long MAX_LAG_CELLS = 4096;

  private ConfigLoader() { }

  /**
   * Reads and checks the configuration file at {@code path}.
   * @throws ConfigException if the file cannot be read or any key is wrong
   */
  public static PipelineConfig load(Path path) {
    String text;
    try {
      text = Files.readString(path, StandardCharsets.UTF_8);
    } catch (IOException e) {
      throw new ConfigException("", path + ": cannot read the configuration file (" + e.getMessage() + ")");
    }
    return parse(text, path.toString());
  }

  /**
   * Parses and checks a configuration given as YAML text.
   * @param sourceName used in syntax-error messages, e.g. the file name
   * @throws ConfigException if the YAML is malformed or any key is wrong
   */
  public static PipelineConfig parse(String yaml, String sourceName) {
    ObjectMapper mapper = new ObjectMapper(new YAMLFactory());
    mapper.enable(JsonParser.Feature.STRICT_DUPLICATE_DETECTION);
    JsonNode root;
    try {
      root = mapper.readTree(yaml);
    } catch (JsonProcessingException e) {
      if (e.getCause() instanceof org.yaml.snakeyaml.error.MarkedYAMLException y && y.getProblemMark() != null) {
        String ctx = y.getContext() == null ? "" : " (" + y.getContext() + ")";
        throw new ConfigException("", sourceName + ": YAML syntax error at line " + (y.getProblemMark().getLine() + 1)
            + ", column " + (y.getProblemMark().getColumn() + 1) + ": " + y.getProblem() + ctx);
      }
      String where = e.getLocation() == null ? ""
          : " at line " + e.getLocation().getLineNr() + ", column " + e.getLocation().getColumnNr();
      String msg = e.getOriginalMessage() == null ? "unreadable" : e.getOriginalMessage();
      int nl = msg.indexOf('\n');
      if (nl >= 0) msg = msg.substring(0, nl);
      throw new ConfigException("", sourceName + ": YAML syntax error" + where + ": " + msg);
    }
    if (root == null || root.isMissingNode() || root.isNull()) {
      throw new ConfigException("", sourceName + ": the configuration is empty; start with name: and input:");
    }
    return new ConfigLoader.Reader(sourceName).read(root);
  }

  /** Levenshtein edit distance (common practice), for "did you mean" suggestions. */
  static int editDistance(String a, String b) {
    int[] prev = new int[b.length() + 1];
    int[] cur = new int[b.length() + 1];
    for (int j = 0; j <= b.length(); j++) prev[j] = j;
    for (int i = 1; i <= a.length(); i++) {
      cur[0] = i;
      for (int j = 1; j <= b.length(); j++) {
        int sub = prev[j - 1] + (a.charAt(i - 1) == b.charAt(j - 1) ? 0 : 1);
        cur[j] = Math.min(sub, Math.min(prev[j] + 1, cur[j - 1] + 1));
      }
      int[] t = prev; prev = cur; cur = t;
    }
    return prev[b.length()];
  }

  /** The nearest of {@code candidates} to {@code word}, or null when none is close. */
  static String nearest(String word, Iterable<String> candidates) {
    String best = null;
    int bestD = Integer.MAX_VALUE;
    for (String c : candidates) {
      int d = editDistance(word, c);
      if (d < bestD) { bestD = d; best = c; }
    }
    return best != null && bestD <= Math.max(2, (word.length() + 2) / 3) ? best : null;
  }

  /** How a value is shown in messages: text quoted, numbers and booleans as written. */
  static String render(JsonNode n) {
    if (n == null || n.isNull() || n.isMissingNode()) return "an empty value";
    if (n.isTextual()) return "\"" + n.asText() + "\"";
    if (n.isObject()) return "a mapping";
    if (n.isArray()) return "a list";
    return n.asText();
  }

  static String join(String path, String key) { return path.isEmpty() ? key : path + "." + key; }

  static ConfigException notAllowed(String path, JsonNode value, String allowed) {
    return new ConfigException(path, path + ": " + render(value) + " is not allowed; " + allowed);
  }

  /** An IPv4 or IPv6 literal, or a host name by the syntax of RFC 1123 (labels of letters, digits and '-'). */
  static boolean isAddressOrHostName(String v) {
    if (v == null || v.isEmpty() || v.length() > 253) return false;
    if (v.indexOf(':') >= 0) {
      // IPv6 literal: hex digits and ':' (a trailing dotted IPv4 part allowed); the socket layer checks the rest
      return v.chars().allMatch(c -> Character.digit(c, 16) >= 0 || c == ':' || c == '.') && v.chars().filter(c -> c == ':').count() >= 2;
    }
    for (String label : v.split("\\.", -1)) {
      if (label.isEmpty() || label.length() > 63 || label.startsWith("-") || label.endsWith("-")) return false;
      for (int i = 0; i < label.length(); i++) {
        char c = label.charAt(i);
        if (!(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-')) return false;
      }
    }
    if (v.matches("[0-9.]+")) {
      // all digits: must be a dotted quad of 0..255
      String[] parts = v.split("\\.");
      if (parts.length != 4) return false;
      for (String part : parts) if (part.length() > 3 || Integer.parseInt(part) > 255) return false;
    }
    return true;
  }

  static ConfigException missing(String path, String hint) {
    return new ConfigException(path, path + ": missing; " + hint);
  }

  static final String DURATION_ALLOWED =
      "use an ISO 8601 duration of at least 1 ms such as PT1H, PT90M or P30D (days, hours, minutes, seconds)";

  /** One mapping in the document and its key path. */
  static final class Section {
    final JsonNode node;
    final String path;
    private final List<ConfigWarning> warnings;

    Section(JsonNode node, String path) { this(node, path, new ArrayList<>()); }

    Section(JsonNode node, String path, List<ConfigWarning> warnings) {
      if (!node.isObject()) throw notAllowed(path, node, "use a mapping of keys to values");
      this.node = node;
      this.path = path;
      this.warnings = warnings;
    }

    /** Records a warning (the loader's result carries them; the commands print them at start). */
    void warn(String key, String message) { warnings.add(new ConfigWarning(key, message)); }

    /** Accepts exactly the keys {@link ConfigKeys} lists for {@code scope} (and their former names), plus {@code extra}. */
    void allowScope(String scope, String... extra) {
      List<String> keys = new ArrayList<>(List.of(extra));
      keys.addAll(ConfigKeys.in(scope));
      allow(keys);
    }

    void allow(List<String> keys) {
      Iterator<String> it = node.fieldNames();
      while (it.hasNext()) {
        String k = it.next();
        if (!keys.contains(k)) {
          String near = nearest(k, keys);
          String p = join(path, k);
          throw new ConfigException(p, p + ": unknown key; "
              + (near != null ? "did you mean " + near + "?" : "allowed here: " + String.join(", ", keys)));
        }
      }
    }

    boolean has(String key) {
      JsonNode v = node.get(key);
      return v != null && !v.isNull();
    }

    JsonNode get(String key) { return node.get(key); }

    String p(String key) { return join(path, key); }

    Section section(String key) { return has(key) ? new Section(node.get(key), p(key), warnings) : null; }

    long whole(String key, long def, long min, long max) {
      if (!has(key)) return def;
      JsonNode v = node.get(key);
      String allowed = max == Long.MAX_VALUE ? "use a whole number of at least " + min
          : "use a whole number from " + min + " to " + max;
      if (!v.isNumber()) throw notAllowed(p(key), v, allowed);
      double d = v.asDouble();
      if (!v.isIntegralNumber() && (d != Math.rint(d) || Math.abs(d) > 9.0e15)) throw notAllowed(p(key), v, allowed);
      if (v.isBigInteger() || d < min || d > max) throw notAllowed(p(key), v, allowed);
      long l = v.isIntegralNumber() ? v.asLong() : (long) d;
      if (l < min || l > max) throw notAllowed(p(key), v, allowed);
      return l;
    }

    int wholeInt(String key, int def, int min, int max) { return (int) whole(key, def, min, max); }

    double number(String key, double def, double min, boolean minOpen, double max, boolean maxOpen, String allowed) {
      if (!has(key)) return def;
      JsonNode v = node.get(key);
      if (!v.isNumber()) throw notAllowed(p(key), v, allowed);
      double d = v.asDouble();
      boolean ok = Double.isFinite(d) && (minOpen ? d > min : d >= min) && (maxOpen ? d < max : d <= max);
      if (!ok) throw notAllowed(p(key), v, allowed);
      return d;
    }

    boolean flag(String key, boolean def) {
      if (!has(key)) return def;
      JsonNode v = node.get(key);
      if (!v.isBoolean()) throw notAllowed(p(key), v, "use true or false");
      return v.asBoolean();
    }

    String text(String key, String def, String allowed) {
      if (!has(key)) return def;
      JsonNode v = node.get(key);
      if (!v.isTextual()) throw notAllowed(p(key), v, allowed);
      return v.asText();
    }

    String requiredText(String key, String hint, String allowed) {
      if (!has(key)) throw missing(p(key), hint);
      return text(key, null, allowed);
    }

    <E extends Enum<E>> E choice(String key, E def, E[] values, java.util.function.Function<E, String> word) {
      if (!has(key)) return def;
      JsonNode v = node.get(key);
      List<String> words = new ArrayList<>();
      for (E e : values) words.add(word.apply(e));
      String allowed = "use one of " + String.join(", ", words);
      if (!v.isTextual()) throw notAllowed(p(key), v, allowed);
      for (E e : values) if (word.apply(e).equals(v.asText())) return e;
      throw notAllowed(p(key), v, allowed);
    }

    /** An ISO 8601 duration in millis; 0 when absent. */
    long durationMillis(String key) {
      if (!has(key)) return 0L;
      JsonNode v = node.get(key);
      String allowed = DURATION_ALLOWED;
      if (!v.isTextual()) throw notAllowed(p(key), v, allowed);
      try {
        Duration d = Duration.parse(v.asText());
        long ms = d.toMillis();
        if (ms < 1) throw notAllowed(p(key), v, allowed);
        return ms;
      } catch (DateTimeParseException | ArithmeticException e) {
        throw notAllowed(p(key), v, allowed);
      }
    }
  }

  /** Walks one document. */
  private static final class Reader {
    private final String source;
    private final List<ConfigWarning> warnings = new ArrayList<>();

    Reader(String source) { this.source = source; }

    /** The section under {@code key}, or an empty one when absent, so every key reads its default from {@link ConfigKeys}. */
    private Section sectionOrEmpty(Section parent, String key) {
      Section s = parent.section(key);
      return s != null ? s : new Section(com.fasterxml.jackson.databind.node.JsonNodeFactory.instance.objectNode(), parent.p(key), warnings);
    }

    PipelineConfig read(JsonNode root) {
      if (!root.isObject()) {
        throw new ConfigException("", source + ": the configuration is " + render(root) + "; it must be a mapping with name:, input:, target:, features:");
      }
      Section top = new Section(root, "", warnings);
      top.allowScope("");

      String name = top.requiredText("name", "give the pipeline a name, e.g. name: quillmarsh", nameRule());
      if (!NAME.matcher(name).matches()) throw notAllowed("name", top.get("name"), nameRule());

      if (!top.has("input")) throw missing("input", "declare the input, e.g. input: {fields: {sessions: number}}");
      PipelineConfig.Input input = input(top.section("input"));

      PipelineConfig.Model model = model(sectionOrEmpty(top, "model"));

      String target = target(top, input.schema());

      List<FeatureConfig> features = features(top, input, target, model);

      PipelineConfig.Outputs outputs = outputs(sectionOrEmpty(top, "outputs"), input.schema());
      PipelineConfig.Kafka kafka = kafka(sectionOrEmpty(top, "kafka"));
      PipelineConfig.Web web = web(sectionOrEmpty(top, "web"));
      PipelineConfig.Drift drift = drift(sectionOrEmpty(top, "drift"));
      warnAboutTime(top.section("input"), input, features);
      PipelineConfig.TargetScale targetScale = targetScale(sectionOrEmpty(top, "model"));
      if (model.scope() == ModelScope.GLOBAL) {
        checkGlobal(input, drift);
      }
      return new PipelineConfig(name, input, target, features, model, outputs, kafka, web, source, drift, warnings, targetScale);
    }

    /**
     * Warnings for times that silently take a surprising value: no event time (a file's records all
     * sit at 1970-01-01, Kafka's at their produce time), and calendar features without a time zone (UTC).
     */
    private void warnAboutTime(Section in, PipelineConfig.Input input, List<FeatureConfig> features) {
      if (input.eventTime().isEmpty()) {
        String k = in.p("event_time");
        warnings.add(new ConfigWarning(k, k + ": not given, so records carry no event time of their own: read from a file"
            + " (replay, backtest) every record sits at 1970-01-01T00:00Z (calendar features constant, one time snapshot,"
            + " no forgetting by half-life); read from Kafka each takes its record timestamp (when it was produced, not when"
            + " it happened); name the field that holds the event time, e.g. event_time: {field: observed_at, format: iso8601}"));
      }
      List<String> cyclic = new ArrayList<>();
      for (FeatureConfig f : features) if (f instanceof FeatureConfig.Cyclic c) cyclic.add(c.name());
      if (!cyclic.isEmpty() && !in.has("time_zone")) {
        String k = in.p("time_zone");
        warnings.add(new ConfigWarning(k, k + ": not given, so the calendar features (" + String.join(", ", cyclic)
            + ") are computed in UTC, whatever offset the times carry; set the zone whose hours and weekdays matter,"
            + " e.g. time_zone: Europe/Amsterdam (an IANA name), or time_zone: UTC to keep UTC and silence this warning"));
      }
    }

    private static String nameRule() {
      return "use 1 to 64 lowercase letters, digits, '.', '_' or '-', starting with a letter or digit";
    }

    private PipelineConfig.Input input(Section in) {
      in.allowScope("input");
      Optional<String> topic = Optional.empty();
      if (in.has("topic")) {
        String t = in.text("topic", null, "use a Kafka topic name");
        if (t.isEmpty() || t.length() > 249 || !t.matches("[A-Za-z0-9._-]+")) {
          throw notAllowed(in.p("topic"), in.get("topic"), "use 1 to 249 letters, digits, '.', '_' or '-' (a Kafka topic name)");
        }
        topic = Optional.of(t);
      }
      if (!in.has("fields")) throw missing(in.p("fields"), "declare the input fields, e.g. fields: {hub: text, sessions: number}");
      Section fs = in.section("fields");
      LinkedHashMap<String, FieldType> fields = new LinkedHashMap<>();
      Iterator<Map.Entry<String, JsonNode>> it = fs.node.properties().iterator();
      while (it.hasNext()) {
        Map.Entry<String, JsonNode> e = it.next();
        String fp = fs.p(e.getKey());
        if (e.getKey().isEmpty() || e.getKey().length() > 256) {
          throw new ConfigException(fp, fp + ": field names must have 1 to 256 characters");
        }
        JsonNode v = e.getValue();
        FieldType t = v.isTextual() ? FieldType.ofWord(v.asText()) : null;
        if (t == null) throw notAllowed(fp, v, "use one of text, number, flag, time");
        fields.put(e.getKey(), t);
      }
      if (fields.isEmpty()) throw notAllowed(fs.path, fs.node, "declare at least one field, e.g. sessions: number");
      RecordSchema schema = new RecordSchema(fields);

      Optional<PipelineConfig.EventTime> eventTime = Optional.empty();
      if (in.has("event_time")) {
        Section et = in.section("event_time");
        et.allowScope("input.event_time");
        TimeFormat format = ConfigKeys.EVENT_TIME_FORMAT.read(et);
        String f = et.requiredText("field", "name the field that holds the event time, e.g. field: observed_at", "name a declared time field");
        int slot = schema.slot(f);
        if (slot < 0) {
          throw notAllowed(et.p("field"), et.get("field"), "name a declared field, e.g. declare it under input.fields as " + f + ": time");
        }
        FieldType t = schema.type(slot);
        if (t == FieldType.NUMBER && format == TimeFormat.ISO8601) {
          throw notAllowed(et.p("field"), et.get("field"), "it is a number field; use format epoch_millis or epoch_seconds, or declare it as time");
        }
        if (t != FieldType.TIME && t != FieldType.NUMBER) {
          throw notAllowed(et.p("field"), et.get("field"), "it is a " + t.word() + " field; name a time field (or a number field with an epoch format)");
        }
        eventTime = Optional.of(new PipelineConfig.EventTime(f, format));
      }

      ZoneId zone = ConfigKeys.TIME_ZONE.read(in);

      Section l = sectionOrEmpty(in, "limits");
      l.allowScope("input.limits");
      int maxText = ConfigKeys.MAX_TEXT_LENGTH.read(l);
      int maxBytes = ConfigKeys.MAX_RECORD_BYTES.read(l);
      double maxAbs = ConfigKeys.MAX_ABS_VALUE.read(l);
      int minYear = ConfigKeys.MIN_YEAR.read(l);
      int maxYear = ConfigKeys.MAX_YEAR.read(l);
      if (maxYear < minYear) {
        throw notAllowed(l.p("max_year"), l.has("max_year") ? l.get("max_year") : new com.fasterxml.jackson.databind.node.IntNode(maxYear),
            "use a year from min_year (" + minYear + ") to 9999");
      }
      RecordLimits limits = new RecordLimits(maxText, maxBytes, maxAbs, minYear, maxYear);
      Section c = sectionOrEmpty(in, "clock");
      c.allowScope("input.clock");
      PipelineConfig.Clock clock = new PipelineConfig.Clock(ConfigKeys.CLOCK_MAX_AHEAD.read(c), ConfigKeys.CLOCK_CONFIRM_RECORDS.read(c));
      PipelineConfig.Forecast forecast = PipelineConfig.Forecast.NONE;
      if (in.has("forecast")) {
        forecast = forecast(in.section("forecast"), schema, eventTime);
      }
      PipelineConfig.InputFormat format = ConfigKeys.INPUT_FORMAT.read(in);
      String schemaFile = ConfigKeys.AVRO_SCHEMA_FILE.read(in);
      if (format != PipelineConfig.InputFormat.JSON && schemaFile.isBlank()) {
        throw missing(in.p("avro_schema_file"), "input.format " + format.word() + " needs the Avro schema the values are"
            + " written with: give its file, e.g. avro_schema_file: sessions.avsc (schemas are not looked up by id)");
      }
      if (format == PipelineConfig.InputFormat.JSON && !schemaFile.isBlank()) {
        throw notAllowed(in.p("avro_schema_file"), in.get("avro_schema_file"), "set input.format to avro or avro_framed, or leave this key out");
      }
      return new PipelineConfig.Input(topic, schema, eventTime, zone, limits, clock, forecast,
          new PipelineConfig.Encoding(format, schemaFile));
    }

    private PipelineConfig.Forecast forecast(Section f, RecordSchema schema, Optional<PipelineConfig.EventTime> eventTime) {
      f.allowScope("input.forecast");
      List<String> texts = fieldsOfType(schema, FieldType.TEXT, null);
      String entityAllowed = "use a list of declared text fields that identify what a forecast is for, e.g. entity_fields: [hub]; declared: "
          + listOr(texts, "(none; declare one under input.fields as hub: text)");
      if (!f.has("entity_fields")) throw missing(f.p("entity_fields"), entityAllowed);
      JsonNode list = f.get("entity_fields");
      if (!list.isArray() || list.size() == 0) throw notAllowed(f.p("entity_fields"), list, entityAllowed);
      List<String> entity = new ArrayList<>();
      for (int i = 0; i < list.size(); i++) {
        JsonNode e = list.get(i);
        String name = e.isTextual() ? e.asText() : null;
        if (name == null || !texts.contains(name) || entity.contains(name)) {
          throw notAllowed(f.p("entity_fields") + "[" + i + "]", e, entityAllowed + (name != null && entity.contains(name) ? " (each once)" : ""));
        }
        entity.add(name);
      }
      List<String> times = fieldsOfType(schema, FieldType.TIME, null);
      eventTime.ifPresent(et -> times.remove(et.field()));
      String timeAllowed = "name a declared time field other than the event time, the time whose value a record forecasts"
          + " or reports, e.g. target_time_field: hour_start; declared: " + listOr(times, "(none; declare one under input.fields as hour_start: time)");
      String target = f.requiredText("target_time_field", timeAllowed, timeAllowed);
      if (!times.contains(target)) throw notAllowed(f.p("target_time_field"), f.get("target_time_field"), timeAllowed);
      int max = ConfigKeys.FORECAST_MAX_PENDING.read(f);
      long delay = ConfigKeys.FORECAST_MAX_ACTUAL_DELAY.read(f);
      long lag = delay;
      if (f.has("max_actual_lag")) {
        lag = f.durationMillis("max_actual_lag");
        if (lag < delay) {
          throw notAllowed(f.p("max_actual_lag"), f.get("max_actual_lag"), "use a span at least as long as input.forecast.max_actual_delay ("
              + Duration.ofMillis(delay) + "): a forecast never waits for an actual that would be rejected as too late");
        }
      }
      int learned = ConfigKeys.FORECAST_MAX_LEARNED_ACTUALS.read(f);
      Correction corrections = ConfigKeys.FORECAST_CORRECTIONS.read(f);
      if (corrections == Correction.REPLACE && learned == 0) {
        throw notAllowed(f.p("corrections"), f.get("corrections"), "corrections: replace needs the memory of learned actuals;"
            + " set input.forecast.max_learned_actuals above 0, or use reject or learn_as_new");
      }
      List<Long> buckets = horizonBuckets(f);
      int entities = ConfigKeys.FORECAST_MAX_METRIC_ENTITIES.read(f);
      return new PipelineConfig.Forecast(entity, target, max, delay, lag, learned, corrections, buckets, entities);
    }

    /**
     * {@code input.forecast.horizon_buckets}: a non-empty list of ISO 8601 durations, each at least
     * 1 ms, strictly increasing (each is the upper bound of one bucket); absent gives the default.
     */
    private static List<Long> horizonBuckets(Section f) {
      if (!f.has("horizon_buckets")) return PipelineConfig.Forecast.DEFAULT_HORIZON_BUCKETS_MILLIS;
      String allowed = "use a list of 1 to " + PipelineConfig.Forecast.MAX_HORIZON_BUCKETS + " ISO 8601 durations, each greater than 0 and larger"
          + " than the one before, e.g. horizon_buckets: [PT1H, PT6H, P1D, P7D] (each is the upper bound of one bucket)";
      JsonNode list = f.get("horizon_buckets");
      if (!list.isArray() || list.size() == 0 || list.size() > PipelineConfig.Forecast.MAX_HORIZON_BUCKETS) throw notAllowed(f.p("horizon_buckets"), list, allowed);
      List<Long> out = new ArrayList<>();
      for (int i = 0; i < list.size(); i++) {
        JsonNode e = list.get(i);
        String path = f.p("horizon_buckets") + "[" + i + "]";
        long ms;
        try {
          ms = e.isTextual() ? Duration.parse(e.asText()).toMillis() : 0L;
        } catch (DateTimeParseException | ArithmeticException x) {
          ms = 0L;
        }
        if (ms < 1) throw notAllowed(path, e, allowed);
        if (!out.isEmpty() && ms <= out.get(out.size() - 1)) {
          throw notAllowed(path, e, (ms == out.get(out.size() - 1) ? "it repeats the bucket before it; " : "it is not larger than the bucket before it; ")
              + allowed);
        }
        out.add(ms);
      }
      return out;
    }

    private static List<String> fieldsOfType(RecordSchema s, FieldType a, FieldType b) {
      List<String> out = new ArrayList<>();
      for (int i = 0; i < s.size(); i++) if (s.type(i) == a || s.type(i) == b) out.add(s.name(i));
      return out;
    }

    private static String listOr(List<String> names, String none) {
      return names.isEmpty() ? none : String.join(", ", names);
    }

    private String target(Section top, RecordSchema schema) {
      List<String> numbers = fieldsOfType(schema, FieldType.NUMBER, null);
      String hint = "name the number field to predict, e.g. target: " + (numbers.isEmpty() ? "sessions" : numbers.get(0));
      String target = top.requiredText("target", hint, "name a declared number field");
      int slot = schema.slot(target);
      String allowed = "name a declared number field: " + listOr(numbers, "(none declared; declare one under input.fields)");
      if (slot < 0 || schema.type(slot) != FieldType.NUMBER) throw notAllowed("target", top.get("target"), allowed);
      return target;
    }

    private List<FeatureConfig> features(Section top, PipelineConfig.Input input, String target, PipelineConfig.Model model) {
      List<FeatureConfig> out = new ArrayList<>();
      if (!top.has("features")) return out;
      JsonNode list = top.get("features");
      if (!list.isArray()) throw notAllowed("features", list, "use a list of features, each with a kind, e.g. - kind: onehot");
      Map<String, Integer> names = new HashMap<>();
      List<Section> crossSections = new ArrayList<>();
      for (int i = 0; i < list.size(); i++) {
        String path = "features[" + i + "]";
        Section f = new Section(list.get(i), path, warnings);
        FeatureConfig fc = feature(f, input, target, model);
        Integer earlier = names.putIfAbsent(fc.name(), i);
        if (earlier != null) {
          String np = f.p("name");
          throw new ConfigException(np, np + ": \"" + fc.name() + "\" is not allowed; features[" + earlier
              + "] already has that name; give each feature its own name");
        }
        out.add(fc);
        crossSections.add(f);
      }
      for (int i = 0; i < out.size(); i++) {
        if (out.get(i) instanceof FeatureConfig.Cross c) {
          Section f = crossSections.get(i);
          for (String part : c.of()) {
            Integer j = names.get(part);
            if (j == null || j >= i) {
              throw notAllowed(f.p("of"), new com.fasterxml.jackson.databind.node.TextNode(part),
                  "name two features declared before this one, of kinds onehot or cyclic, e.g. of: [hub, hour_of_day]");
            }
            FeatureConfig other = out.get(j);
            if (!(other instanceof FeatureConfig.OneHot) && !(other instanceof FeatureConfig.Cyclic)) {
              throw notAllowed(f.p("of"), new com.fasterxml.jackson.databind.node.TextNode(part),
                  "a cross takes onehot or cyclic features (unscaled columns), and " + part + " is " + other.kind());
            }
          }
          for (int k = 0; k < i; k++) {
            if (out.get(k) instanceof FeatureConfig.Cross d && new java.util.HashSet<>(d.of()).equals(new java.util.HashSet<>(c.of()))) {
              throw notAllowed(f.p("of"), f.get("of"), "features[" + k + "] already crosses " + d.of().get(0) + " with " + d.of().get(1));
            }
          }
        }
      }
      return out;
    }

    private FeatureConfig feature(Section f, PipelineConfig.Input input, String target, PipelineConfig.Model model) {
      if (!f.has("kind")) throw missing(f.p("kind"), "use one of " + FEATURE_KINDS);
      String kind = f.text("kind", null, "use one of " + FEATURE_KINDS);
      RecordSchema s = input.schema();
      switch (kind) {
        case "onehot": {
          f.allowScope("features.onehot", "kind");
          String field = field(f, s, target, FieldType.TEXT, FieldType.FLAG, "text or flag field");
          String name = name(f, field);
          int maxLevels = ConfigKeys.MAX_LEVELS.read(f);
          int minCount = ConfigKeys.MIN_COUNT.read(f);
          long expireMs = ConfigKeys.EXPIRE_AFTER.read(f);
          long expireRecords = ConfigKeys.EXPIRE_AFTER_RECORDS.read(f);
          return new FeatureConfig.OneHot(name, field, maxLevels, minCount, expireMs, expireRecords);
        }
        case "cyclic": {
          f.allowScope("features.cyclic", "kind");
          if (!f.has("cycle")) throw missing(f.p("cycle"), ConfigKeys.CYCLE.allowed());
          Cycle cycle = ConfigKeys.CYCLE.read(f);
          String field = null;
          if (f.has("field")) field = field(f, s, target, FieldType.TIME, null, "time field");
          String name = f.has("name") ? name(f, null) : cycle.word();
          int harmonics = ConfigKeys.HARMONICS.read(f);
          return new FeatureConfig.Cyclic(name, cycle, field, harmonics);
        }
        case "numeric": {
          f.allowScope("features.numeric", "kind");
          String field = field(f, s, target, FieldType.NUMBER, null, "number field");
          String name = name(f, field);
          Transform tr = ConfigKeys.TRANSFORM.read(f);
          double exponent = 1.0;
          if (f.has("exponent")) {
            if (tr != Transform.POWER) {
              throw new ConfigException(f.p("exponent"), f.p("exponent") + ": only allowed with transform: power; remove it or set transform: power");
            }
            exponent = ConfigKeys.EXPONENT.read(f);
            if (exponent == 0) throw notAllowed(f.p("exponent"), f.get("exponent"), ConfigKeys.EXPONENT_ALLOWED);
          } else if (tr == Transform.POWER) {
            throw missing(f.p("exponent"), "give the power for transform: power, e.g. exponent: 0.5");
          }
          Scaling sc = scaling(f, model, ConfigKeys.NUMERIC_SCALING);
          double hl = ConfigKeys.NUMERIC_WEIGHTING.read(f);
          double clip = ConfigKeys.NUMERIC_CLIP.read(f);
          return new FeatureConfig.Numeric(name, field, tr, exponent, sc, hl, clip);
        }
        case "polynomial": {
          f.allowScope("features.polynomial", "kind");
          String field = field(f, s, target, FieldType.NUMBER, null, "number field");
          String name = name(f, field);
          if (!f.has("degree")) throw missing(f.p("degree"), "give the highest power, a whole number from 1 to 16");
          int degree = ConfigKeys.DEGREE.read(f);
          Scaling sc = scaling(f, model, ConfigKeys.POLYNOMIAL_SCALING);
          double hl = ConfigKeys.POLYNOMIAL_WEIGHTING.read(f);
          double clip = ConfigKeys.POLYNOMIAL_CLIP.read(f);
          return new FeatureConfig.Polynomial(name, field, degree, sc, hl, clip);
        }
        case "cross": {
          f.allowScope("features.cross", "kind");
          if (!f.has("of")) throw missing(f.p("of"), "name the two features to cross, e.g. of: [hub, hour_of_day]");
          JsonNode of = f.get("of");
          String allowed = "name two different features declared before this one, of kinds onehot or cyclic, e.g. of: [hub, hour_of_day]";
          if (!of.isArray() || of.size() != 2 || !of.get(0).isTextual() || !of.get(1).isTextual()
              || of.get(0).asText().equals(of.get(1).asText())) {
            throw notAllowed(f.p("of"), of, allowed);
          }
          List<String> parts = List.of(of.get(0).asText(), of.get(1).asText());
          String name = f.has("name") ? name(f, null) : parts.get(0) + "*" + parts.get(1);
          return new FeatureConfig.Cross(name, parts);
        }
        case "bends": {
          f.allowScope("features.bends", "kind");
          String field = field(f, s, target, FieldType.NUMBER, null, "number field");
          String name = name(f, field);
          BendBasis basis = ConfigKeys.BENDS_BASIS.read(f);
          List<Double> knots = knots(f, basis);
          Scaling sc = scaling(f, model, ConfigKeys.BENDS_SCALING);
          double hl = ConfigKeys.BENDS_WEIGHTING.read(f);
          double clip = ConfigKeys.BENDS_CLIP.read(f);
          return new FeatureConfig.Bends(name, field, basis, knots, sc, hl, clip);
        }
        case "special_days": {
          f.allowScope("features.special_days", "kind");
          return specialDays(f);
        }
        case "lag": {
          f.allowScope("features.lag", "kind");
          String field = historyField(f, s, target, input);
          if (!f.has("offset")) throw missing(f.p("offset"), "give how far before the target time to look, an ISO 8601 duration, e.g. offset: P1D");
          long offset = f.durationMillis("offset");
          long grid = ConfigKeys.LAG_GRID.read(f);
          long tolerance = ConfigKeys.LAG_TOLERANCE.read(f);
          if (offset % grid != 0) {
            throw notAllowed(f.p("offset"), f.get("offset"), "use a whole number of grid steps (grid is " + java.time.Duration.ofMillis(grid) + "), e.g. P1D with grid PT1H");
          }
          if (tolerance % grid != 0) {
            throw notAllowed(f.p("tolerance"), f.get("tolerance"), "use a whole number of grid steps (grid is " + java.time.Duration.ofMillis(grid) + "), or leave it out for the offset's own cell only");
          }
          long cells = (offset + tolerance) / grid + 2;
          if (cells > MAX_LAG_CELLS) {
            throw notAllowed(f.p("offset"), f.get("offset"), "offset + tolerance may span at most " + (MAX_LAG_CELLS - 2)
                + " grid steps per entity (each entity keeps one value per step); use a coarser grid or a shorter offset");
          }
          int maxEntities = ConfigKeys.LAG_MAX_ENTITIES.read(f);
          if (cells * maxEntities > Integer.MAX_VALUE - 8) {
            throw notAllowed(f.p("max_entities"), f.get("max_entities"), "use at most " + (Integer.MAX_VALUE - 8) / cells
                + " with " + cells + " cells per entity (offset + tolerance over grid, plus 2), or a coarser grid");
          }
          long expire = ConfigKeys.LAG_EXPIRE_AFTER.read(f);
          if (expire <= offset + tolerance) {
            throw notAllowed(f.p("expire_after"), f.has("expire_after") ? f.get("expire_after") : new com.fasterxml.jackson.databind.node.TextNode(java.time.Duration.ofMillis(expire).toString()),
                "use a span longer than offset + tolerance (" + java.time.Duration.ofMillis(offset + tolerance) + "), or an entity is dropped before its lag is read");
          }
          String name = name(f, field + "_lag_" + f.get("offset").asText());
          return new FeatureConfig.Lag(name, field, offset, grid, tolerance, maxEntities, expire);
        }
        case "smoothed": {
          f.allowScope("features.smoothed", "kind");
          String field = historyField(f, s, target, input);
          if (!f.has("half_life")) throw missing(f.p("half_life"), "give the age at which an actual weighs half, an ISO 8601 duration, e.g. half_life: P7D");
          long halfLife = f.durationMillis("half_life");
          Season season = ConfigKeys.SEASON.read(f);
          int maxEntities = ConfigKeys.SMOOTHED_MAX_ENTITIES.read(f);
          long expire = ConfigKeys.SMOOTHED_EXPIRE_AFTER.read(f);
          String name = name(f, field + "_smoothed");
          return new FeatureConfig.Smoothed(name, field, halfLife, season, maxEntities, expire);
        }
        default:
          throw notAllowed(f.p("kind"), f.get("kind"), "use one of " + FEATURE_KINDS);
      }
    }

    /** A special_days feature: its dates (listed and from a file), its holiday calendar, its days before and after. */
    private FeatureConfig.SpecialDays specialDays(Section f) {
      String name = f.has("name") ? name(f, null) : "special_day";
      java.util.TreeSet<java.time.LocalDate> dates = new java.util.TreeSet<>();
      String dateAllowed = "use an ISO 8601 date, e.g. 2026-12-25";
      if (f.has("dates")) {
        JsonNode list = f.get("dates");
        if (!list.isArray()) throw notAllowed(f.p("dates"), list, "list dates, e.g. dates: [2026-12-24, 2026-12-31]");
        for (int i = 0; i < list.size(); i++) {
          JsonNode d = list.get(i);
          java.time.LocalDate date = d.isTextual() ? isoDate(d.asText()) : null;
          if (date == null) throw notAllowed(f.p("dates") + "[" + i + "]", d, dateAllowed);
          dates.add(date);
        }
      }
      String file = null;
      if (f.has("dates_file")) {
        file = f.text("dates_file", null, "use a file path");
        Path path = Path.of(file);
        List<String> lines;
        try {
          lines = Files.readAllLines(path, StandardCharsets.UTF_8);
        } catch (IOException | java.io.UncheckedIOException e) {
          throw new ConfigException(f.p("dates_file"), f.p("dates_file") + ": cannot read " + file + " (" + e.getMessage()
              + "); give a readable file with one ISO 8601 date a line (a path relative to the working directory)");
        }
        for (int i = 0; i < lines.size(); i++) {
          String l = lines.get(i).strip();
          int hash = l.indexOf('#');
          if (hash >= 0) l = l.substring(0, hash).strip();
          if (l.isEmpty()) continue;
          java.time.LocalDate date = isoDate(l);
          if (date == null) {
            throw new ConfigException(f.p("dates_file"), f.p("dates_file") + ": " + file + " line " + (i + 1) + ": \"" + l
                + "\" is not a date; " + dateAllowed + " (one a line; # starts a comment)");
          }
          dates.add(date);
        }
      }
      String country = null;
      String region = null;
      if (f.has("holiday_country")) {
        java.util.Set<String> codes = new java.util.TreeSet<>();
        for (String c : de.focus_shift.jollyday.core.HolidayManager.getSupportedCalendarCodes()) codes.add(c.toLowerCase(java.util.Locale.ROOT));
        String c = f.text("holiday_country", null, "use a country code");
        country = c.toLowerCase(java.util.Locale.ROOT);
        if (!codes.contains(country)) {
          throw notAllowed(f.p("holiday_country"), f.get("holiday_country"), "use a country code of the holiday calendars: " + String.join(", ", codes));
        }
      }
      if (f.has("holiday_region")) {
        if (country == null) {
          throw new ConfigException(f.p("holiday_region"), f.p("holiday_region") + ": only allowed with holiday_country; add holiday_country or remove it");
        }
        java.util.Set<String> regions = new java.util.TreeSet<>(de.focus_shift.jollyday.core.HolidayManager.getInstance(
            de.focus_shift.jollyday.core.ManagerParameters.create(country)).getCalendarHierarchy().getChildren().keySet());
        region = f.text("holiday_region", null, "use a region code").toLowerCase(java.util.Locale.ROOT);
        if (!regions.contains(region)) {
          throw notAllowed(f.p("holiday_region"), f.get("holiday_region"), regions.isEmpty()
              ? "the calendar " + country + " has no regions; remove holiday_region"
              : "use a region of " + country + ": " + String.join(", ", regions));
        }
      }
      if (dates.isEmpty() && country == null) {
        throw new ConfigException(f.path, f.path + ": no special days; give dates, dates_file (with at least one date) or holiday_country");
      }
      int before = ConfigKeys.SPECIAL_DAYS_BEFORE.read(f);
      int after = ConfigKeys.SPECIAL_DAYS_AFTER.read(f);
      return new FeatureConfig.SpecialDays(name, new ArrayList<>(dates), file, country, region, before, after);
    }

    /** An ISO 8601 calendar date (yyyy-mm-dd), or null. */
    private static java.time.LocalDate isoDate(String s) {
      try {
        return java.time.LocalDate.parse(s); // java.time: ISO_LOCAL_DATE
      } catch (java.time.format.DateTimeParseException e) {
        return null;
      }
    }

    /** The knots of a bends feature: finite numbers in increasing order, each once; enough for the basis. */
    private List<Double> knots(Section f, BendBasis basis) {
      int least = basis == BendBasis.NATURAL_SPLINE ? 3 : 1;
      String example = basis == BendBasis.NATURAL_SPLINE ? "[0, 10, 20]" : "[10, 20]";
      String allowed = "list " + least + " to " + MAX_KNOTS + " numbers in increasing order, each once (basis "
          + basis.word() + "), e.g. knots: " + example;
      if (!f.has("knots")) throw missing(f.p("knots"), allowed);
      JsonNode list = f.get("knots");
      if (!list.isArray() || list.size() < least || list.size() > MAX_KNOTS) throw notAllowed(f.p("knots"), list, allowed);
      List<Double> out = new ArrayList<>();
      for (int i = 0; i < list.size(); i++) {
        JsonNode k = list.get(i);
        if (!k.isNumber() || !Double.isFinite(k.asDouble())) throw notAllowed(f.p("knots") + "[" + i + "]", k, "use a finite number; " + allowed);
        double v = k.asDouble();
        if (i > 0 && !(v > out.get(i - 1))) {
          throw notAllowed(f.p("knots"), list, "knot " + i + " (" + k.asText() + ") is not greater than the one before it; " + allowed);
        }
        out.add(v);
      }
      return out;
    }

    /**
     * The number field a history feature reads (the target when {@code field} is absent); and the
     * entity it needs: {@code input.forecast.entity_fields} (there is no single-series default).
     */
    private String historyField(Section f, RecordSchema s, String target, PipelineConfig.Input input) {
      if (!input.forecast().enabled()) {
        throw new ConfigException(f.p("kind"), f.p("kind") + ": " + f.get("kind").asText() + " reads each entity's own history,"
            + " and no entity is declared; add input.forecast with entity_fields (e.g. entity_fields: [hub]) and target_time_field"
            + " (docs/forecasting.md); for a single series, declare a text field that every record carries with the same value");
      }
      if (!f.has("field")) return target;
      List<String> numbers = fieldsOfType(s, FieldType.NUMBER, null);
      String allowed = "name a declared number field (the target is the default): " + listOr(numbers, "(none declared)");
      String field = f.requiredText("field", allowed, allowed);
      int slot = s.slot(field);
      if (slot < 0 || s.type(slot) != FieldType.NUMBER) throw notAllowed(f.p("field"), f.get("field"), allowed);
      return field;
    }

    private Scaling scaling(Section f, PipelineConfig.Model model, ConfigKey<Scaling> key) {
      // the key's default (standardize) needs the constant term; without it the default is scale
      Scaling sc = f.has(key.name()) || model.constantTerm() ? key.read(f) : Scaling.SCALE;
      if (sc == Scaling.STANDARDIZE && !model.constantTerm()) {
        throw notAllowed(f.p("scaling"), f.get("scaling"),
            "standardize needs model.constant_term: true to absorb the centre; use scale or none");
      }
      return sc;
    }

    private String field(Section f, RecordSchema s, String target, FieldType a, FieldType b, String what) {
      List<String> fitting = fieldsOfType(s, a, b);
      fitting.remove(target);
      String allowed = "name a declared " + what + ": " + listOr(fitting, "(none declared; declare one under input.fields)");
      String field = f.requiredText("field", allowed, allowed);
      int slot = s.slot(field);
      if (slot < 0 || (s.type(slot) != a && s.type(slot) != b)) throw notAllowed(f.p("field"), f.get("field"), allowed);
      if (field.equals(target)) {
        throw notAllowed(f.p("field"), f.get("field"), "it is the target, and a feature must not read the target; " + allowed);
      }
      return field;
    }

    private String name(Section f, String def) {
      String allowed = "use 1 to 128 characters without '=', '*', '^' or spaces";
      String n = f.text("name", def, allowed);
      if (n.isEmpty() || n.length() > 128 || !n.matches("[^=*^\\s]+")) {
        if (!f.has("name")) {
          String np = f.p("name");
          throw new ConfigException(np, np + ": missing; the field name \"" + def + "\" cannot be a column prefix, so give the feature a name (" + allowed + ")");
        }
        throw notAllowed(f.p("name"), f.get("name"), allowed);
      }
      return n;
    }

    /**
     * {@code model.scope: global} with settings whose state cannot be shared: each one names its
     * key and the way out.
     */
    private void checkGlobal(PipelineConfig.Input input, PipelineConfig.Drift drift) {
      if (input.forecast().enabled() && input.forecast().corrections() == Correction.REPLACE) {
        throw new ConfigException("input.forecast.corrections", "input.forecast.corrections: replace cannot be used with"
            + " model.scope: global (a corrected actual is taken out of this partition's model, but its information was"
            + " already shared with the others); use reject or learn_as_new, or model.scope: partition");
      }
      if (drift.resetToRecords() > 0) {
        throw new ConfigException("drift.reset_to_records", "drift.reset_to_records: " + drift.resetToRecords()
            + " cannot be used with model.scope: global (a reset cuts this partition's information, folded shares of the"
            + " others included, which they keep); use 0, or model.scope: partition");
      }
    }

    private PipelineConfig.Model model(Section m) {
      m.allowScope("model");
      boolean constant = ConfigKeys.CONSTANT_TERM.read(m);
      double prior = ConfigKeys.PRIOR_VARIANCE.read(m);
      boolean diffuse = prior == Double.POSITIVE_INFINITY;
      double factor = ConfigKeys.FORGETTING_FACTOR.defaultValue();
      long halfLife = 0;
      if (m.has("forgetting")) {
        Section fg = m.section("forgetting");
        fg.allowScope("model.forgetting");
        boolean hasF = fg.has("factor");
        boolean hasH = fg.has("half_life");
        if (hasF && hasH) {
          throw new ConfigException(fg.path, fg.path + ": both factor and half_life are given; keep exactly one");
        }
        if (!hasF && !hasH) {
          throw new ConfigException(fg.path, fg.path + ": neither factor nor half_life is given; give exactly one, e.g. factor: 0.999 or half_life: P7D");
        }
        factor = ConfigKeys.FORGETTING_FACTOR.read(fg);
        halfLife = ConfigKeys.FORGETTING_HALF_LIFE.read(fg);
      }
      boolean towardsPrior = ConfigKeys.FORGET_TOWARDS_PRIOR.read(m);
      double level = ConfigKeys.INTERVAL_LEVEL.read(m);
      double noise = ConfigKeys.NOISE_HALF_LIFE_RECORDS.read(m);
      ModelScope scope = ConfigKeys.MODEL_SCOPE.read(m);
      if (scope == ModelScope.GLOBAL) {
        String k = m.p("scope");
        if (factor != 1.0) {
          throw new ConfigException(k, k + ": global needs forgetting by event time (model.forgetting.half_life) or none;"
              + " model.forgetting.factor " + factor + " forgets per record, and partitions share no record count");
        }
        if (!constant) {
          throw new ConfigException(k, k + ": global needs model.constant_term: true; a share is brought to another"
              + " partition's scaler basis by a shift that the constant term takes (set model.constant_term: true, or"
              + " model.scope: partition)");
        }
      }
      long shareRecords = ConfigKeys.SHARE_EVERY_RECORDS.read(m);
      long shareMillis = ConfigKeys.SHARE_EVERY.read(m);
      if (scope == ModelScope.GLOBAL && shareRecords == 0 && shareMillis == 0) {
        String k = m.p("share_every_records");
        throw new ConfigException(k, k + ": 0 with no model.share_every: a partition would never share; give"
            + " model.share_every_records (e.g. 1000) or model.share_every (e.g. PT1H)");
      }
      return new PipelineConfig.Model(constant, prior, diffuse, factor, halfLife, towardsPrior, level, noise, scope,
          shareRecords, shareMillis);
    }

    /** The target's keys of the {@code model} section (docs/model.md, "Transformed target"). */
    private PipelineConfig.TargetScale targetScale(Section m) {
      TargetTransform transform = ConfigKeys.TARGET_TRANSFORM.read(m);
      TargetPoint point = ConfigKeys.TARGET_POINT.read(m);
      boolean nonNegative = ConfigKeys.TARGET_NON_NEGATIVE.read(m);
      return new PipelineConfig.TargetScale(transform, point, nonNegative);
    }

    private PipelineConfig.Outputs outputs(Section o, RecordSchema schema) {
      o.allowScope("outputs");
      long every = ConfigKeys.SNAPSHOT_EVERY_RECORDS.read(o);
      long period = ConfigKeys.SNAPSHOT_EVERY.read(o);
      double metrics = ConfigKeys.METRICS_HALF_LIFE_RECORDS.read(o);
      List<String> echo = new ArrayList<>();
      if (o.has("echo_fields")) {
        List<String> allowedNames = fieldsOfType(schema, FieldType.TEXT, FieldType.FLAG);
        String allowed = "use a list of declared text or flag fields to copy into each prediction, e.g. echo_fields: [hub],"
            + " or [] for none; declared: " + listOr(allowedNames, "(none)");
        JsonNode list = o.get("echo_fields");
        if (!list.isArray()) throw notAllowed(o.p("echo_fields"), list, allowed);
        for (int i = 0; i < list.size(); i++) {
          JsonNode e = list.get(i);
          String n = e.isTextual() ? e.asText() : null;
          if (n == null || !allowedNames.contains(n) || echo.contains(n)) {
            throw notAllowed(o.p("echo_fields") + "[" + i + "]", e, allowed + (n != null && echo.contains(n) ? " (each once)" : ""));
          }
          echo.add(n);
        }
      }
      int digits = ConfigKeys.SIGNIFICANT_DIGITS.read(o);
      PipelineConfig.OutputEncoding encoding = ConfigKeys.OUTPUT_ENCODING.read(o);
      return new PipelineConfig.Outputs(every, period, metrics, echo, digits, encoding);
    }

    private PipelineConfig.Kafka kafka(Section k) {
      k.allowScope("kafka");
      String servers = ConfigKeys.BOOTSTRAP_SERVERS.read(k);
      long ms = ConfigKeys.COMMIT_INTERVAL_MS.read(k);
      long recs = ConfigKeys.COMMIT_INTERVAL_RECORDS.read(k);
      LinkedHashMap<String, String> props = new LinkedHashMap<>();
      if (k.has("client_properties")) {
        Section cp = k.section("client_properties");
        Iterator<Map.Entry<String, JsonNode>> it = cp.node.properties().iterator();
        while (it.hasNext()) {
          Map.Entry<String, JsonNode> e = it.next();
          JsonNode v = e.getValue();
          if (!v.isValueNode() || v.isNull()) {
            throw notAllowed(cp.p(e.getKey()), v, "use a single value (text, number or true/false)");
          }
          props.put(e.getKey(), v.asText());
        }
      }
      Section em = sectionOrEmpty(k, "embedded");
      em.allowScope("kafka.embedded");
      PipelineConfig.Embedded embedded = new PipelineConfig.Embedded(ConfigKeys.EMBEDDED_DATA_DIR.read(em),
          ConfigKeys.EMBEDDED_PORT.read(em));
      return new PipelineConfig.Kafka(servers, ms, recs, props, embedded);
    }

    private PipelineConfig.Drift drift(Section d) {
      d.allowScope("drift");
      double k = ConfigKeys.WEIGHT_ALARM_SE.read(d);
      DriftBaseline baseline = ConfigKeys.BASELINE.read(d);
      if (d.has("baseline_snapshots") && baseline != DriftBaseline.SNAPSHOTS_AGO) {
        throw new ConfigException(d.p("baseline_snapshots"), d.p("baseline_snapshots")
            + ": only allowed with baseline: snapshots_ago; remove it or set baseline: snapshots_ago");
      }
      int back = ConfigKeys.BASELINE_SNAPSHOTS.read(d);
      // YAML 1.1 reads a bare off as false: accept it as the word off
      ErrorTest test = d.has("error_test") && d.get("error_test").isBoolean() && !d.get("error_test").asBoolean()
          ? ErrorTest.OFF : ConfigKeys.ERROR_TEST.read(d);
      double delta = ConfigKeys.ERROR_ALLOWANCE.read(d);
      double lambda = ConfigKeys.ERROR_THRESHOLD.read(d);
      long warm = ConfigKeys.ERROR_WARMUP_RECORDS.read(d);
      int hold = ConfigKeys.ALARM_HOLD_SNAPSHOTS.read(d);
      int window = ConfigKeys.ATTRIBUTION_RECORDS.read(d);
      double named = ConfigKeys.ATTRIBUTION_SE.read(d);
      int reset = ConfigKeys.RESET_TO_RECORDS.read(d);
      int contrasts = ConfigKeys.CONTRAST_LEVELS.read(d);
      int breakBlock = ConfigKeys.BREAK_BLOCK_RECORDS.read(d);
      int breakBlocks = ConfigKeys.BREAK_BLOCKS.read(d);
      double breakSe = ConfigKeys.BREAK_SE.read(d);
      return new PipelineConfig.Drift(k, baseline, back, test, delta, lambda, warm, hold, window, named, reset,
          contrasts, breakBlock, breakBlocks, breakSe);
    }

    private PipelineConfig.Web web(Section w) {
      w.allowScope("web");
      boolean enabled = ConfigKeys.WEB_ENABLED.read(w);
      String bind = ConfigKeys.WEB_BIND.read(w);
      if (!isAddressOrHostName(bind)) {
        throw notAllowed(w.p("bind"), w.get("bind"), "use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name");
      }
      int port = ConfigKeys.WEB_PORT.read(w);
      List<String> hosts = new ArrayList<>();
      if (w.has("allowed_hosts")) {
        JsonNode list = w.get("allowed_hosts");
        String hint = "use a list of host names or addresses the page is opened by, e.g. [runnel.example.internal, 10.0.0.5]";
        if (!list.isArray()) throw notAllowed(w.p("allowed_hosts"), list, hint);
        for (int i = 0; i < list.size(); i++) {
          JsonNode h = list.get(i);
          String v = h.isTextual() ? h.asText().toLowerCase(java.util.Locale.ROOT) : "";
          if (v.startsWith("[") && v.endsWith("]")) v = v.substring(1, v.length() - 1);
          if (!isAddressOrHostName(v)) throw notAllowed(w.p("allowed_hosts") + "[" + i + "]", h, hint);
          hosts.add(v);
        }
      }
      String tokenFile = ConfigKeys.WEB_TOKEN_FILE.read(w);
      String keyField = ConfigKeys.WEB_FORECAST_KEY_FIELD.read(w);
      String keyStore = ConfigKeys.WEB_KEY_STORE_FILE.read(w);
      String keyStorePassword = ConfigKeys.WEB_KEY_STORE_PASSWORD_FILE.read(w);
      return new PipelineConfig.Web(enabled, bind, port, hosts, tokenFile, keyField, keyStore, keyStorePassword);
    }
  }
}
