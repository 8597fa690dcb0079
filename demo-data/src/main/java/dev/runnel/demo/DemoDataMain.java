// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.io.IOException;
import java.io.OutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.LocalDateTime;
import java.time.format.DateTimeParseException;

/**
 * Command line for the invented Quillmarsh Charging data: regenerates a JSON Lines file and the
 * ground-truth files, bit-identically from the settings.
 *
 * <pre>{@code
 * java -cp demo-data/target/classes dev.runnel.demo.DemoDataMain \
 *     --out quillmarsh.jsonl [--start 2026-01-05T00:00] [--days 364] [--seed 20260105] \
 *     [--horizon 1] [--no-forecasts] [--no-corrupt] [--truth truth.json] [--truth-md truth.md]
 * }</pre>
 * {@code --sample DIR} writes the three committed sample files into DIR with the sample settings.
 */
public final class DemoDataMain {
  static final String USAGE = String.join("\n",
      "usage: DemoDataMain (--out FILE | --truth FILE | --truth-md FILE | --sample DIR) [options]",
      "  --out FILE        write the JSON Lines stream to FILE",
      "  --truth FILE      write the ground truth as JSON to FILE",
      "  --truth-md FILE   write the ground truth as Markdown to FILE",
      "  --sample DIR      write quillmarsh-small.jsonl, quillmarsh-truth.json and quillmarsh-truth.md",
      "                    into DIR with the sample settings (start " + Settings.SAMPLE_START
          + ", " + Settings.SAMPLE_DAYS + " days, seed " + Settings.DEFAULT_SEED + ", horizon " + Settings.SAMPLE_HORIZON_HOURS + ")",
      "  --start T         first local hour in Europe/Amsterdam, ISO 8601 (default " + Settings.DEFAULT_START + ")",
      "  --days N          days to generate, 1..36600 (default " + Settings.DEFAULT_DAYS + ")",
      "  --seed S          random seed, a long (default " + Settings.DEFAULT_SEED + ")",
      "  --horizon H       hour-ahead requests for 1..H hours ahead every hour, 0..48 (default " + Settings.DEFAULT_HORIZON_HOURS + ")",
      "  --no-forecasts    leave out the requests (hour-ahead and the day-ahead ones at 18:00)",
      "  --no-corrupt      leave out the five planned corrupt lines (good lines in their place)",
      "The data are invented.");

  private DemoDataMain() {}

  /** Runs the command and exits with its status (0 done, 2 bad arguments, 1 I/O failure). */
  public static void main(String[] args) {
    int rc = run(args, System.err);
    if (rc != 0) {
      System.exit(rc);
    }
  }

  /**
   * Runs the command.
   * @param args the arguments. Not modified.
   * @param err where errors and the usage go. Modified.
   * @return 0 on success, 2 on bad arguments, 1 on an I/O failure
   */
  public static int run(String[] args, PrintStream err) {
    try {
      Parsed p = parse(args);
      if (p.sampleDir != null) {
        writeSample(p.sampleDir);
        return 0;
      }
      if (p.out != null) {
        try (OutputStream os = Files.newOutputStream(p.out)) {
          new QuillmarshGenerator(p.settings).writeTo(os);
        }
      }
      if (p.truth != null) {
        Files.writeString(p.truth, GroundTruth.toJson(p.settings), StandardCharsets.UTF_8);
      }
      if (p.truthMd != null) {
        Files.writeString(p.truthMd, GroundTruth.toMarkdown(p.settings), StandardCharsets.UTF_8);
      }
      return 0;
    } catch (IllegalArgumentException e) {
      err.println("error: " + e.getMessage());
      err.println(USAGE);
      return 2;
    } catch (IOException | java.io.UncheckedIOException e) {
      err.println("error: " + e.getMessage());
      return 1;
    }
  }

  /**
   * Writes the three committed sample files into {@code dir} with {@link Settings#sample()}.
   * @param dir an existing folder. Not modified except for the three files.
   * @throws IOException if writing fails
   */
  public static void writeSample(Path dir) throws IOException {
    Settings s = Settings.sample();
    try (OutputStream os = Files.newOutputStream(dir.resolve("quillmarsh-small.jsonl"))) {
      new QuillmarshGenerator(s).writeTo(os);
    }
    Files.writeString(dir.resolve("quillmarsh-truth.json"), GroundTruth.toJson(s), StandardCharsets.UTF_8);
    Files.writeString(dir.resolve("quillmarsh-truth.md"), GroundTruth.toMarkdown(s), StandardCharsets.UTF_8);
  }

  /** The parsed arguments. */
  static final class Parsed {
    Settings settings;
    Path out;
    Path truth;
    Path truthMd;
    Path sampleDir;
  }

  /**
   * Parses the arguments.
   * @throws IllegalArgumentException naming the option and value that are wrong
   */
  static Parsed parse(String[] args) {
    Parsed p = new Parsed();
    LocalDateTime start = Settings.DEFAULT_START;
    int days = Settings.DEFAULT_DAYS;
    long seed = Settings.DEFAULT_SEED;
    int horizon = Settings.DEFAULT_HORIZON_HOURS;
    boolean forecasts = true;
    boolean corrupt = true;
    for (int i = 0; i < args.length; i++) {
      String a = args[i];
      switch (a) {
        case "--out": p.out = Path.of(value(args, i++)); break;
        case "--truth": p.truth = Path.of(value(args, i++)); break;
        case "--truth-md": p.truthMd = Path.of(value(args, i++)); break;
        case "--sample": p.sampleDir = Path.of(value(args, i++)); break;
        case "--start": {
          String v = value(args, i++);
          try {
            start = LocalDateTime.parse(v);
          } catch (DateTimeParseException e) {
            throw new IllegalArgumentException("--start must be a local ISO 8601 date-time like 2026-01-05T00:00, got '" + v + "'");
          }
          break;
        }
        case "--days": days = (int) number(a, value(args, i++), 1, 36_600); break;
        case "--seed": seed = number(a, value(args, i++), Long.MIN_VALUE, Long.MAX_VALUE); break;
        case "--horizon": horizon = (int) number(a, value(args, i++), 0, 48); break;
        case "--no-forecasts": forecasts = false; break;
        case "--no-corrupt": corrupt = false; break;
        default: throw new IllegalArgumentException("unknown option '" + a + "'");
      }
    }
    if (p.out == null && p.truth == null && p.truthMd == null && p.sampleDir == null) {
      throw new IllegalArgumentException("one of --out, --truth, --truth-md or --sample is required");
    }
    p.settings = new Settings(start, days, seed, horizon, forecasts, corrupt);
    return p;
  }

  private static String value(String[] args, int i) {
    if (i + 1 >= args.length) {
      throw new IllegalArgumentException(args[i] + " needs a value");
    }
    return args[i + 1];
  }

  private static long number(String option, String v, long min, long max) {
    long x;
    try {
      x = Long.parseLong(v);
    } catch (NumberFormatException e) {
      throw new IllegalArgumentException(option + " must be an integer in " + min + ".." + max + ", got '" + v + "'");
    }
    if (x < min || x > max) {
      throw new IllegalArgumentException(option + " must be in " + min + ".." + max + ", got " + x);
    }
    return x;
  }
}
