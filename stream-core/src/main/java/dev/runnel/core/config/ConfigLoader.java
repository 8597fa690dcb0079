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
import java.time.DateTimeException;
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
 * Reads a pipeline configuration from YAML and checks every key. Cold path: the YAML is read into a
 * tree and walked by hand, tracking the key path for messages.
 *
 * <p>Every problem throws {@link ConfigException} with a message of the form
 * {@code <key path>: <value> is not allowed; <what is allowed>}, {@code <key path>: missing; <what
 * to write>} or {@code <key path>: unknown key; did you mean <nearest key>?}. YAML syntax errors
 * say {@code <source>: YAML syntax error at line L, column C: ...}.
 */
public final class ConfigLoader {

  private static final Pattern NAME = Pattern.compile("[a-z0-9][a-z0-9._-]{0,63}");
  private static final String FEATURE_KINDS = "onehot, cyclic, numeric, polynomial, cross";

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

  /** One mapping in the document and its key path. */
  static final class Section {
    final JsonNode node;
    final String path;

    Section(JsonNode node, String path) {
      if (!node.isObject()) throw notAllowed(path, node, "use a mapping of keys to values");
      this.node = node;
      this.path = path;
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

    Section section(String key) { return has(key) ? new Section(node.get(key), p(key)) : null; }

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
      String allowed = "use an ISO 8601 duration of at least 1 ms such as PT1H, PT90M or P30D (days, hours, minutes, seconds)";
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

    Reader(String source) { this.source = source; }

    PipelineConfig read(JsonNode root) {
      if (!root.isObject()) {
        throw new ConfigException("", source + ": the configuration is " + render(root) + "; it must be a mapping with name:, input:, target:, features:");
      }
      Section top = new Section(root, "");
      top.allow(List.of("name", "input", "target", "features", "model", "outputs", "kafka", "web", "drift"));

      String name = top.requiredText("name", "give the pipeline a name, e.g. name: quillmarsh", nameRule());
      if (!NAME.matcher(name).matches()) throw notAllowed("name", top.get("name"), nameRule());

      if (!top.has("input")) throw missing("input", "declare the input, e.g. input: {fields: {sessions: number}}");
      PipelineConfig.Input input = input(top.section("input"));

      PipelineConfig.Model model = model(top.has("model") ? top.section("model") : null);

      String target = target(top, input.schema());

      List<FeatureConfig> features = features(top, input, target, model);

      PipelineConfig.Outputs outputs = outputs(top.has("outputs") ? top.section("outputs") : null);
      PipelineConfig.Kafka kafka = kafka(top.has("kafka") ? top.section("kafka") : null);
      PipelineConfig.Web web = web(top.has("web") ? top.section("web") : null);
      PipelineConfig.Drift drift = drift(top.has("drift") ? top.section("drift") : null);
      return new PipelineConfig(name, input, target, features, model, outputs, kafka, web, source, drift);
    }

    private static String nameRule() {
      return "use 1 to 64 lowercase letters, digits, '.', '_' or '-', starting with a letter or digit";
    }

    private PipelineConfig.Input input(Section in) {
      in.allow(List.of("topic", "fields", "event_time", "time_zone", "limits"));
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
        et.allow(List.of("field", "format"));
        TimeFormat format = et.choice("format", TimeFormat.ISO8601, TimeFormat.values(), TimeFormat::word);
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

      ZoneId zone = ZoneId.of("UTC");
      if (in.has("time_zone")) {
        String allowed = "use an IANA time-zone name such as Europe/Amsterdam, or UTC";
        String z = in.text("time_zone", null, allowed);
        try {
          zone = ZoneId.of(z);
        } catch (DateTimeException e) {
          throw notAllowed(in.p("time_zone"), in.get("time_zone"), allowed);
        }
      }

      RecordLimits d = RecordLimits.DEFAULTS;
      RecordLimits limits = d;
      if (in.has("limits")) {
        Section l = in.section("limits");
        l.allow(List.of("max_text_length", "max_record_bytes", "max_abs_value", "min_year", "max_year"));
        int maxText = l.wholeInt("max_text_length", d.maxTextLength(), 1, 1_000_000);
        int maxBytes = l.wholeInt("max_record_bytes", d.maxRecordBytes(), 64, 16_777_216);
        double maxAbs = l.number("max_abs_value", d.maxAbsValue(), 0, true, Double.MAX_VALUE, false,
            "use a number greater than 0, e.g. 1.0e12");
        int minYear = l.wholeInt("min_year", d.minYear(), 1, 9999);
        int maxYear = (int) l.whole("max_year", d.maxYear(), 1, 9999);
        if (maxYear < minYear) {
          throw notAllowed(l.p("max_year"), l.has("max_year") ? l.get("max_year") : new com.fasterxml.jackson.databind.node.IntNode(maxYear),
              "use a year from min_year (" + minYear + ") to 9999");
        }
        limits = new RecordLimits(maxText, maxBytes, maxAbs, minYear, maxYear);
      }
      return new PipelineConfig.Input(topic, schema, eventTime, zone, limits);
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
        Section f = new Section(list.get(i), path);
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
          f.allow(List.of("kind", "name", "field", "max_levels", "min_count", "expire_after", "expire_after_records"));
          String field = field(f, s, target, FieldType.TEXT, FieldType.FLAG, "text or flag field");
          String name = name(f, field);
          int maxLevels = f.wholeInt("max_levels", 1000, 1, 1_000_000);
          int minCount = f.wholeInt("min_count", 1, 1, 1_000_000);
          long expireMs = f.durationMillis("expire_after");
          long expireRecords = f.whole("expire_after_records", 0, 0, Long.MAX_VALUE);
          return new FeatureConfig.OneHot(name, field, maxLevels, minCount, expireMs, expireRecords);
        }
        case "cyclic": {
          f.allow(List.of("kind", "name", "cycle", "field", "harmonics"));
          if (!f.has("cycle")) throw missing(f.p("cycle"), "use one of hour_of_day, day_of_week, day_of_year");
          Cycle cycle = f.choice("cycle", null, Cycle.values(), Cycle::word);
          String field = null;
          if (f.has("field")) field = field(f, s, target, FieldType.TIME, null, "time field");
          String name = f.has("name") ? name(f, null) : cycle.word();
          int harmonics = f.wholeInt("harmonics", 1, 1, 12);
          return new FeatureConfig.Cyclic(name, cycle, field, harmonics);
        }
        case "numeric": {
          f.allow(List.of("kind", "name", "field", "transform", "exponent", "scaling", "weighting_half_life_records", "clip"));
          String field = field(f, s, target, FieldType.NUMBER, null, "number field");
          String name = name(f, field);
          Transform tr = f.choice("transform", Transform.NONE, Transform.values(), Transform::word);
          double exponent = 1.0;
          if (f.has("exponent")) {
            if (tr != Transform.POWER) {
              throw new ConfigException(f.p("exponent"), f.p("exponent") + ": only allowed with transform: power; remove it or set transform: power");
            }
            exponent = f.number("exponent", 1.0, -1.0e3, false, 1.0e3, false, "use a non-zero number from -1000 to 1000");
            if (exponent == 0) throw notAllowed(f.p("exponent"), f.get("exponent"), "use a non-zero number from -1000 to 1000");
          } else if (tr == Transform.POWER) {
            throw missing(f.p("exponent"), "give the power for transform: power, e.g. exponent: 0.5");
          }
          Scaling sc = scaling(f, model);
          double hl = f.number("weighting_half_life_records", 0, 0, false, 1.0e15, false, "use 0 (no weighting) or a number of records greater than 0");
          double clip = f.number("clip", 0, 0, false, 1.0e6, false, "use 0 (off) or a bound on |z| greater than 0");
          return new FeatureConfig.Numeric(name, field, tr, exponent, sc, hl, clip);
        }
        case "polynomial": {
          f.allow(List.of("kind", "name", "field", "degree", "scaling", "weighting_half_life_records", "clip"));
          String field = field(f, s, target, FieldType.NUMBER, null, "number field");
          String name = name(f, field);
          if (!f.has("degree")) throw missing(f.p("degree"), "give the highest power, a whole number from 1 to 16");
          int degree = f.wholeInt("degree", 2, 1, 16);
          Scaling sc = scaling(f, model);
          double hl = f.number("weighting_half_life_records", 0, 0, false, 1.0e15, false, "use 0 (no weighting) or a number of records greater than 0");
          double clip = f.number("clip", 0, 0, false, 1.0e6, false, "use 0 (off) or a bound on |z| greater than 0");
          return new FeatureConfig.Polynomial(name, field, degree, sc, hl, clip);
        }
        case "cross": {
          f.allow(List.of("kind", "name", "of"));
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
        default:
          throw notAllowed(f.p("kind"), f.get("kind"), "use one of " + FEATURE_KINDS);
      }
    }

    private Scaling scaling(Section f, PipelineConfig.Model model) {
      Scaling def = model.constantTerm() ? Scaling.STANDARDIZE : Scaling.SCALE;
      Scaling sc = f.choice("scaling", def, Scaling.values(), Scaling::word);
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

    private PipelineConfig.Model model(Section m) {
      if (m == null) return new PipelineConfig.Model(true, 1.0, false, 1.0, 0L, true, 0.9, 500);
      m.allow(List.of("constant_term", "prior_variance", "forgetting", "windup_guard", "interval_level", "noise_half_life_records"));
      boolean constant = m.flag("constant_term", true);
      double prior = 1.0;
      boolean diffuse = false;
      if (m.has("prior_variance")) {
        JsonNode v = m.get("prior_variance");
        String allowed = "use a number greater than 0, or the word diffuse";
        if (v.isTextual() && v.asText().equals("diffuse")) {
          diffuse = true;
          prior = Double.POSITIVE_INFINITY;
        } else {
          prior = m.number("prior_variance", 1.0, 0, true, Double.MAX_VALUE, false, allowed);
        }
      }
      double factor = 1.0;
      long halfLife = 0;
      if (m.has("forgetting")) {
        Section fg = m.section("forgetting");
        fg.allow(List.of("factor", "half_life"));
        boolean hasF = fg.has("factor");
        boolean hasH = fg.has("half_life");
        if (hasF && hasH) {
          throw new ConfigException(fg.path, fg.path + ": both factor and half_life are given; keep exactly one");
        }
        if (!hasF && !hasH) {
          throw new ConfigException(fg.path, fg.path + ": neither factor nor half_life is given; give exactly one, e.g. factor: 0.999 or half_life: P7D");
        }
        factor = fg.number("factor", 1.0, 0, true, 1, false, "use a number greater than 0 and at most 1");
        halfLife = fg.durationMillis("half_life");
      }
      boolean windup = m.flag("windup_guard", true);
      double level = m.number("interval_level", 0.9, 0, true, 1, true, "use a number between 0 and 1 (both excluded), e.g. 0.9");
      double noise = m.number("noise_half_life_records", 500, 0, true, 1.0e15, false, "use a number of records greater than 0");
      return new PipelineConfig.Model(constant, prior, diffuse, factor, halfLife, windup, level, noise);
    }

    private PipelineConfig.Outputs outputs(Section o) {
      if (o == null) return new PipelineConfig.Outputs(1000, 0, 1000);
      o.allow(List.of("snapshot_every_records", "snapshot_every", "metrics_half_life_records"));
      long every = o.whole("snapshot_every_records", 1000, 0, Long.MAX_VALUE);
      long period = o.durationMillis("snapshot_every");
      double metrics = o.number("metrics_half_life_records", 1000, 0, true, 1.0e15, false, "use a number of records greater than 0");
      return new PipelineConfig.Outputs(every, period, metrics);
    }

    private PipelineConfig.Kafka kafka(Section k) {
      PipelineConfig.Embedded defEmbedded = new PipelineConfig.Embedded(".runnel/broker", 0);
      if (k == null) return new PipelineConfig.Kafka("", 1000, 5000, Map.of(), defEmbedded);
      k.allow(List.of("bootstrap_servers", "commit_interval_ms", "commit_interval_records", "client_properties", "embedded"));
      String servers = k.text("bootstrap_servers", "", "use host:port[,host:port...], or \"\" for the embedded broker");
      long ms = k.whole("commit_interval_ms", 1000, 1, 3_600_000);
      long recs = k.whole("commit_interval_records", 5000, 1, 1_000_000_000);
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
      PipelineConfig.Embedded embedded = defEmbedded;
      if (k.has("embedded")) {
        Section em = k.section("embedded");
        em.allow(List.of("data_dir", "port"));
        String dir = em.text("data_dir", ".runnel/broker", "use a folder path");
        if (dir.isEmpty()) throw notAllowed(em.p("data_dir"), em.get("data_dir"), "use a folder path");
        int port = em.wholeInt("port", 0, 0, 65535);
        embedded = new PipelineConfig.Embedded(dir, port);
      }
      return new PipelineConfig.Kafka(servers, ms, recs, props, embedded);
    }

    private PipelineConfig.Drift drift(Section d) {
      PipelineConfig.Drift def = PipelineConfig.Drift.DEFAULTS;
      if (d == null) return def;
      d.allow(List.of("weight_alarm_se", "baseline", "baseline_snapshots", "error_test", "error_allowance",
          "error_threshold", "error_warmup_records", "alarm_hold_snapshots"));
      double k = d.number("weight_alarm_se", def.weightAlarmSe(), 0, false, 1.0e6, false,
          "use 0 (off) or a number of standard errors greater than 0, e.g. 4");
      DriftBaseline baseline = d.choice("baseline", def.baseline(), DriftBaseline.values(), DriftBaseline::word);
      if (d.has("baseline_snapshots") && baseline != DriftBaseline.SNAPSHOTS_AGO) {
        throw new ConfigException(d.p("baseline_snapshots"), d.p("baseline_snapshots")
            + ": only allowed with baseline: snapshots_ago; remove it or set baseline: snapshots_ago");
      }
      int back = d.wholeInt("baseline_snapshots", def.baselineSnapshots(), 1, 10_000);
      // YAML 1.1 reads a bare off as false: accept it as the word off
      ErrorTest test = d.has("error_test") && d.get("error_test").isBoolean() && !d.get("error_test").asBoolean()
          ? ErrorTest.OFF : d.choice("error_test", def.errorTest(), ErrorTest.values(), ErrorTest::word);
      double delta = d.number("error_allowance", def.errorAllowance(), 0, false, 100, false,
          "use a number from 0 to 100 (units of the absolute standardized error), e.g. 0.1");
      double lambda = d.number("error_threshold", def.errorThreshold(), 0, true, 1.0e9, false,
          "use a number greater than 0 (units of the absolute standardized error), e.g. 30");
      long warm = d.whole("error_warmup_records", def.errorWarmupRecords(), 1, 1_000_000_000);
      int hold = d.wholeInt("alarm_hold_snapshots", def.alarmHoldSnapshots(), 1, 10_000);
      return new PipelineConfig.Drift(k, baseline, back, test, delta, lambda, warm, hold);
    }

    private PipelineConfig.Web web(Section w) {
      if (w == null) return new PipelineConfig.Web(true, "127.0.0.1", 8642);
      w.allow(List.of("enabled", "bind", "port", "allowed_hosts"));
      boolean enabled = w.flag("enabled", true);
      String bind = w.text("bind", "127.0.0.1", "use an address to listen on, e.g. 127.0.0.1");
      if (!isAddressOrHostName(bind)) {
        throw notAllowed(w.p("bind"), w.get("bind"), "use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name");
      }
      int port = w.wholeInt("port", 8642, 0, 65535);
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
      return new PipelineConfig.Web(enabled, bind, port, hosts);
    }
  }
}
